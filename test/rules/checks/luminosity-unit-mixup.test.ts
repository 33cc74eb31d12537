import { describe, expect, it } from 'vitest';
import { eddingtonLimit } from '../../../rules/checks/eddington-limit.js';
import { luminosityUnitMixup } from '../../../rules/checks/luminosity-unit-mixup.js';
import { massLuminosityOutlier } from '../../../rules/checks/mass-luminosity-outlier.js';
import { luminosityFromRadiusTeff } from '../../../rules/physics/stellar.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

// L_sun = 3.828e26 W = 3.828e33 erg/s (IAU 2015 Resolution B3).
const LSUN_W = 3.828e26;

describe('luminosity-unit-mixup', () => {
  it('recognises watts under a solar header and suggests the solar value', () => {
    const l = luminosityFromRadiusTeff(1.0, 5800);
    const { findings } = runRules([luminosityUnitMixup], [makeBatch({ luminosity: { values: [l * LSUN_W] }, radius: { values: [1.0] }, teff: { values: [5800] } })]);
    expect(findings).toHaveLength(1);
    expect(findings[0].severity).toBe('error');
    expect(findings[0].values.likelyUnit).toBe('W');
    expect(findings[0].suggestion?.value).toBeCloseTo(l, 4);
  });

  it('recognises erg/s, and log L pasted into a linear column', () => {
    const l = luminosityFromRadiusTeff(2.0, 9000);
    const { findings } = runRules([luminosityUnitMixup], [
      makeBatch({ luminosity: { values: [l * LSUN_W * 1e7, Math.log10(l)] }, radius: { values: [2.0, 2.0] }, teff: { values: [9000, 9000] } }),
    ]);
    expect(findings.map((f) => f.values.likelyUnit)).toEqual(['erg/s', 'log(solLum)']);
    expect(findings[1].suggestion?.value).toBeCloseTo(l, 3);
  });

  it('recognises a linear value in a log column', () => {
    const l = 50;
    const { findings } = runRules([luminosityUnitMixup], [
      makeBatch({ luminosity: { values: [10 ** l], raw: [l], unit: 'log(solLum)' }, radius: { values: [2.0] }, teff: { values: [5772 * (l / 4) ** 0.25] } }),
    ]);
    expect(findings).toHaveLength(1);
    expect(findings[0].values.likelyUnit).toBe('solLum');
    expect(findings[0].suggestion?.value).toBeCloseTo(Math.log10(l), 4);
  });

  it('stays silent on consistent rows, including log/linear-ambiguous values', () => {
    const { findings } = runRules([luminosityUnitMixup], [
      makeBatch({ luminosity: { values: [1.0, 2.0, 0.5] }, radius: { values: [1.0, NaN, 0.9] }, teff: { values: [5772, NaN, 5200] }, mass: { values: [1, 1.2, 0.9] } }),
    ]);
    expect(findings).toEqual([]);
  });

  it('falls back to the mass-luminosity relation, then to the range stars have', () => {
    const { findings } = runRules([luminosityUnitMixup], [makeBatch({ luminosity: { values: [1.1 * LSUN_W, 3.9e26] }, mass: { values: [1.0, NaN] } })]);
    expect(findings.map((f) => f.values.likelyUnit)).toEqual(['W', 'W']);
  });

  it('reports a column that is wholly in another unit once, not once per row', () => {
    const n = 50;
    const r = Array.from({ length: n }, (_, i) => 0.5 + i * 0.02);
    const t = r.map(() => 5000);
    const l = r.map((ri) => luminosityFromRadiusTeff(ri, 5000) * LSUN_W);
    const { findings, reports } = runRules([luminosityUnitMixup], [makeBatch({ luminosity: { values: l }, radius: { values: r }, teff: { values: t } })]);
    expect(findings).toHaveLength(1);
    expect(findings[0].scope).toBe('column');
    expect(findings[0].values.likelyUnit).toBe('W');
    expect(reports[0].details.rowsInOtherUnit).toBe(n);
  });

  it('withholds the flagged cell from the judging rules: one slip, one finding', () => {
    const l = luminosityFromRadiusTeff(1.0, 5772);
    const batch = makeBatch({ luminosity: { values: [l * LSUN_W, 1.0] }, mass: { values: [1, 1] }, radius: { values: [1, 1] }, teff: { values: [5772, 5772] }, logg: { values: [4.44, 4.44] } });
    const { findings, reports } = runRules([luminosityUnitMixup, eddingtonLimit, massLuminosityOutlier], [batch]);
    expect(findings.map((f) => f.rule)).toEqual(['luminosity-unit-mixup']);
    const edd = reports.find((r) => r.id === 'eddington-limit')!;
    expect(edd.checked).toBe(1);
  });
});
