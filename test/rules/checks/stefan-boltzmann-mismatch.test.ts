import { describe, expect, it } from 'vitest';
import { stefanBoltzmannMismatch } from '../../../rules/checks/stefan-boltzmann-mismatch.js';
import { markUnusable } from '../../../rules/engine/usable.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

type Cols = Parameters<typeof makeBatch>[0];
const run = (cols: Cols, params: Record<string, string> = {}) =>
  runRules([stefanBoltzmannMismatch], [makeBatch(cols)], { params: { 'stefan-boltzmann-mismatch': params } });
const rowsOf = (r: ReturnType<typeof run>) => r.findings.filter((f) => f.scope === 'row');
const accounted = (r: ReturnType<typeof run>) => r.reports[0].checked + Object.values(r.reports[0].skipped).reduce((a, b) => a + b, 0);

/** L/L_sun = R^2 (Teff/5772 K)^4 with IAU 2015 B3 nominal units. */
const sb = (r: number, t: number) => r * r * (t / 5772) ** 4;

describe('stefan-boltzmann-mismatch', () => {
  it('states how many exceedances chance alone predicts among the rows judged, and how many were seen', () => {
    // 2000 rows exactly on L = R^2 (Teff/5772 K)^4: none is flagged, and Gaussian residuals would
    // give 2 N Q(3) = 2 x 2000 x 0.0013499 = 5.4 by chance (Q(3) from the normal distribution, common practice).
    const n = 2000;
    const radius = Array.from({ length: n }, (_, i) => 0.5 + i / n);
    const teff = radius.map((_, i) => 4000 + i);
    const r = run({ luminosity: { values: radius.map((x, i) => sb(x, teff[i])) }, radius: { values: radius }, teff: { values: teff } });
    const d = r.reports[0].details as { expectedByChance: number; observed: number; rowsJudged: number };
    expect(d.rowsJudged).toBe(n);
    expect(d.observed).toBe(0);
    expect(d.expectedByChance).toBeCloseTo(2 * n * 0.0013499, 2);
  });

  it('stays silent for the Sun, Sirius A and Sirius B', () => {
    // Sun: R = 1, Teff = 5772 K gives 0.9999976 L_sun (IAU 2015 B3; physics-reference.md §1, §11).
    // Sirius A: L 24.7 +- 0.7, R 1.713 +- 0.009, Teff 9845 +- 64 K; R^2 T^4 gives 24.84 L_sun, 0.6 %
    // (physics-reference.md §6, Bond et al. 2017 values). Sirius B: L 0.02448, R 0.008098, Teff
    // quoted about 25 000 K (§6): R^2 T^4 gives 0.0231, 0.026 dex low.
    const r = run({
      luminosity: { values: [1, 24.7, 0.02448], err: [0, 0.7, NaN] },
      radius: { values: [1, 1.713, 0.008098], err: [0, 0.009, NaN] },
      teff: { values: [5772, 9845, 25000], err: [0, 64, NaN] },
    });
    expect(r.findings).toEqual([]);
    expect(r.reports[0].checked).toBe(3);
    expect(sb(1.713, 9845)).toBeCloseTo(24.84, 2);
  });

  it('flags TOI-2406, 3 dex off, as an error with the L, R and Teff that would fit', () => {
    // PHL PROVENANCE.md: M4 V, R 0.20, Teff 3100 K, S_LOG_LUM = 0.531; R^2 T^4 gives log L = -2.48.
    const r = run({ luminosity: { values: [10 ** 0.531], unit: 'log(solLum)', raw: [0.531] }, radius: { values: [0.2] }, teff: { values: [3100] } });
    expect(r.findings).toHaveLength(1);
    const f = r.findings[0];
    expect(f.severity).toBe('error');
    expect(f.values.expectedLogL as number).toBeCloseTo(-2.478, 2);
    expect(f.values.residualDex as number).toBeCloseTo(3.009, 2);
    expect(f.expected?.value).toBeCloseTo(sb(0.2, 3100), 6);
    // The declared column is logarithmic, so the suggestion is a log L.
    expect(f.suggestion?.unit).toBe('log(solLum)');
    expect(f.suggestion?.value).toBeCloseTo(-2.478, 2);
    expect(f.message).toMatch(/R = 6\.389 R_sun/);
  });

  it('warns for a factor of 3 in L without errors, judging it against the tolerance', () => {
    // R = 1, Teff = 5772 K: L = 3 is 0.477 dex off; allowed 3 x 0.1 dex (defaults, common practice).
    const r = run({ luminosity: { values: [3, 1.8] }, radius: { values: [1, 1] }, teff: { values: [5772, 5772] } });
    expect(rowsOf(r).map((f) => [f.row, f.severity])).toEqual([[1, 'warning']]);
    expect(r.findings[0].suggestion?.value).toBeCloseTo(1, 5);
  });

  it('keeps Vega, a rapid rotator, silent at the default tolerance but not without one', () => {
    // Vega, Yoon et al. 2010 set (physics-reference.md §6, trap T8): L 40.12 +- 0.45, Teff 9602 +- 180 K,
    // equatorial R 2.818 and polar R 2.362: R^2 T^4 is 60.8 and 42.7 L_sun, -0.18 and -0.03 dex.
    const vega: Cols = { luminosity: { values: [40.12, 40.12], err: [0.45, 0.45] }, radius: { values: [2.818, 2.362] }, teff: { values: [9602, 9602], err: [180, 180] } };
    expect(run(vega).findings).toEqual([]);
    const strict = run(vega, { toleranceDex: '0' });
    expect(strict.findings.map((f) => f.row)).toEqual([1]);
    expect(strict.findings[0].values.residualDex as number).toBeCloseTo(-0.18, 2);
  });

  it('takes each error on the side that faces the expectation', () => {
    // L = 2.5 at R = 1, Teff = 5772 K is 0.40 dex above; a radius of 1 +0.3/-0.01 can reach it
    // (2 x 0.114 dex upward), 1 +0.01/-0.3 cannot.
    const up = run({ luminosity: { values: [2.5] }, radius: { values: [1], errLo: [0.01], errHi: [0.3] }, teff: { values: [5772] } });
    expect(up.findings).toEqual([]);
    const down = run({ luminosity: { values: [2.5] }, radius: { values: [1], errLo: [0.3], errHi: [0.01] }, teff: { values: [5772] } });
    expect(down.findings).toHaveLength(1);
  });

  it('reports a whole-column offset once, as the red-supergiant list has, and judges rows against it', () => {
    // Healy et al. 2024 list (massive-luminous-stars PROVENANCE.md): log L sits 0.0213 dex above
    // R^2 T^4 on every row. With a tight tolerance the rows would all fire without the correction.
    const n = 40;
    const radius = Array.from({ length: n }, (_, i) => 300 + 20 * i);
    const teff = Array.from({ length: n }, (_, i) => 3600 + 10 * i);
    const lum = radius.map((r, i) => sb(r, teff[i]) * 10 ** 0.0213);
    lum[7] *= 10 ** 0.3; // one row 0.3 dex beyond the column's own offset
    const r = run({ luminosity: { values: lum }, radius: { values: radius }, teff: { values: teff } }, { toleranceDex: '0.01' });
    const col = r.findings.filter((f) => f.scope === 'column');
    expect(col).toHaveLength(1);
    expect(col[0].severity).toBe('note');
    expect(col[0].values.medianOffsetDex as number).toBeCloseTo(0.0213, 4);
    expect(col[0].message).toMatch(/older solar Teff or L_sun/);
    expect(rowsOf(r).map((f) => f.row)).toEqual([8]);
    // That row fails whatever the offset, so it is reported as it streams by, against the relation
    // without the offset (0.3 + 0.0213 dex).
    expect(rowsOf(r)[0].values.residualDex as number).toBeCloseTo(0.3213, 3);
    expect(r.reports[0].details.columnOffsetDex).toBeCloseTo(0.0213, 4);
  });

  it('gives no column note where residuals scatter around zero', () => {
    const n = 30;
    const lum = Array.from({ length: n }, (_, i) => 10 ** (0.03 * Math.sin(i)));
    const r = run({ luminosity: { values: lum }, radius: { values: lum.map(() => 1) }, teff: { values: lum.map(() => 5772) } });
    expect(r.findings).toEqual([]);
  });

  it('accounts for every row: missing, non-positive and screened-out cells are skipped with a reason', () => {
    const batch = makeBatch({ luminosity: { values: [1, NaN, 1, 1, 4e26] }, radius: { values: [1, 1, NaN, -1, 1] }, teff: { values: [5772, 5772, 5772, 5772, 5772] } });
    markUnusable(batch, 'luminosity', 4); // a watts value a screening rule already reported
    const r = runRules([stefanBoltzmannMismatch], [batch]);
    expect(r.findings).toEqual([]);
    expect(r.reports[0].checked).toBe(1);
    expect(accounted(r)).toBe(5);
    expect(Object.keys(r.reports[0].skipped).sort()).toEqual(['luminosity missing or unusable', 'radius or Teff missing or unusable', 'radius or Teff not positive']);
  });
});
