import { describe, expect, it } from 'vitest';
import { bolometricMagnitudeMismatch, matchZeroPoint } from '../../../rules/checks/bolometric-magnitude-mismatch.js';
import { mbolFromLuminosity } from '../../../rules/physics/stellar.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

type Cols = Parameters<typeof makeBatch>[0];
const run = (cols: Cols, params: Record<string, string> = {}) =>
  runRules([bolometricMagnitudeMismatch], [makeBatch(cols)], { params: { 'bolometric-magnitude-mismatch': params } });
const rowsOf = (r: ReturnType<typeof run>) => r.findings.filter((f) => f.scope === 'row');
const accounted = (r: ReturnType<typeof run>) => r.reports[0].checked + Object.values(r.reports[0].skipped).reduce((a, b) => a + b, 0);

/** A column of n luminosities from 10 to 1e5 L_sun, and M_bol on a solar zero point `zp`. */
function column(n: number, zp: number) {
  const lum = Array.from({ length: n }, (_, i) => 10 ** (1 + (4 * i) / n));
  return { lum, mbol: lum.map((l) => zp - 2.5 * Math.log10(l)) };
}

describe('bolometric-magnitude-mismatch', () => {
  it('stays silent for the Sun, Sirius A and 100 L_sun on the IAU 2015 B2 scale', () => {
    // IAU 2015 B2: 1 L_sun -> 4.7400, 100 L_sun -> -0.2600 (physics-reference.md §7);
    // Sirius A, L = 24.7 -> 1.25825 (§6, §11).
    const r = run({ mbol: { values: [4.74, 1.258, -0.26] }, luminosity: { values: [1, 24.7, 100] } });
    expect(r.findings).toEqual([]);
    expect(mbolFromLuminosity(24.7)).toBeCloseTo(1.25825, 4);
  });

  it('warns for a row 0.76 mag off, with the expected M_bol as the suggestion', () => {
    // 100 L_sun is -0.26 on the IAU scale (physics-reference.md §7); 0.5 is 0.76 mag (0.30 dex) fainter.
    const r = run({ mbol: { values: [0.5] }, luminosity: { values: [100] } });
    expect(r.findings).toHaveLength(1);
    const f = r.findings[0];
    expect(f.severity).toBe('warning');
    expect(f.expected?.value).toBeCloseTo(-0.26, 3);
    expect(f.suggestion?.value).toBeCloseTo(-0.26, 3);
    // 1 mag = 0.4 dex (physics-reference.md T1): M_bol 0.5 means L = 10^(-0.4 (0.5 - 4.74)) = 49.66 L_sun.
    expect(f.message).toMatch(/L = 49\.66 L_sun/);
  });

  it('calls a flipped sign an error and suggests the sign back', () => {
    // 1e6 L_sun -> -10.2600 on the IAU scale (physics-reference.md §7).
    const r = run({ mbol: { values: [10.26] }, luminosity: { values: [1e6] } });
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].severity).toBe('error');
    expect(r.findings[0].values.likelyCause).toBe('sign flipped');
    expect(r.findings[0].suggestion?.value).toBeCloseTo(-10.26, 3);
  });

  it('names M_bol,sun = 4.80 once for a column that uses it, as the red-supergiant list does, and no row', () => {
    // massive-luminous-stars PROVENANCE.md: log L = (4.80 - Mbol)/2.5 on every row, 0.06 mag off IAU.
    // With a tight tolerance every row would fire against the unshifted relation.
    const { lum, mbol } = column(40, 4.8);
    mbol[5] += 0.5; // one row 0.5 mag beyond the column's own zero point
    const r = run({ mbol: { values: mbol }, luminosity: { values: lum } }, { toleranceMag: '0.01' });
    const col = r.findings.filter((f) => f.scope === 'column');
    expect(col).toHaveLength(1);
    expect(col[0].severity).toBe('note');
    expect(col[0].values.medianOffsetMag as number).toBeCloseTo(0.06, 4);
    expect(col[0].values.knownZeroPoint).toBe(4.8);
    expect(col[0].message).toMatch(/M_bol,sun = 4\.8\b/);
    expect(rowsOf(r).map((f) => f.row)).toEqual([6]);
  });

  it('judges rows near the threshold against the offset-corrected relation', () => {
    // Zero point 4.75 (1999 IAU Commissions proposal, physics-reference.md §1, T2): +0.01 mag. With
    // toleranceMag 0.004 (3 sigma = 0.012 mag) a row 0.008 mag beyond the column passes only once the
    // column's 0.01 is taken off, and a row 0.0135 mag brighter than the column (near the IAU value) fails.
    const { lum, mbol } = column(30, 4.75);
    mbol[2] += 0.008;
    mbol[9] -= 0.0135;
    const r = run({ mbol: { values: mbol }, luminosity: { values: lum } }, { toleranceMag: '0.004' });
    const col = r.findings.filter((f) => f.scope === 'column');
    expect(col[0].values.knownZeroPoint).toBe(4.75);
    expect(rowsOf(r).map((f) => f.row)).toEqual([10]);
    expect(rowsOf(r)[0].values.columnOffsetMag as number).toBeCloseTo(0.01, 4);
  });

  it('knows the older zero points and says when an offset matches none', () => {
    // physics-reference.md §1 and T2: 4.75, 4.7554 (Mamajek 2012), 4.72; the RSG list's 4.80.
    expect(matchZeroPoint(0.01)?.mbolSun).toBe(4.75);
    expect(matchZeroPoint(0.0154)?.mbolSun).toBe(4.7554);
    expect(matchZeroPoint(-0.02)?.mbolSun).toBe(4.72);
    expect(matchZeroPoint(0.035)).toBeNull();
    const { lum, mbol } = column(20, 4.775);
    const r = run({ mbol: { values: mbol }, luminosity: { values: lum } });
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].message).toMatch(/not one we know/);
  });

  it('accounts for every row, luminosity missing or M_bol missing', () => {
    const r = run({ mbol: { values: [4.74, NaN, 4.74] }, luminosity: { values: [1, 1, NaN] } });
    expect(r.findings).toEqual([]);
    expect(r.reports[0].checked).toBe(1);
    expect(accounted(r)).toBe(3);
  });
});
