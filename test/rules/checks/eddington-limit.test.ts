import { describe, expect, it } from 'vitest';
import { eddingtonLimit } from '../../../rules/checks/eddington-limit.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

// Limits per solar mass used below: 38 414 L_sun at X = 0.7 and 65 304 L_sun at X = 0, derived in
// physics-reference.md §3 from IAU 2015 B3 (GM_sun, L_sun) and CODATA 2018 (c) with
// kappa = 0.02 (1 + X) m^2/kg.
const run = (cols: Parameters<typeof makeBatch>[0], params: Record<string, string> = {}) =>
  runRules([eddingtonLimit], [makeBatch(cols)], { params: { 'eddington-limit': params } });

describe('eddington-limit', () => {
  it('raises an error above the X = 0 limit, which no composition allows', () => {
    const { findings } = run({ mass: { values: [1] }, luminosity: { values: [7e4] } });
    expect(findings).toHaveLength(1);
    expect(findings[0].severity).toBe('error');
    expect(findings[0].row).toBe(1);
    expect(findings[0].expected?.max).toBeCloseTo(65304, -1);
    // The suggestion is the smallest mass that would carry this luminosity at X = 0.7.
    expect(findings[0].suggestion?.value).toBeCloseTo(7e4 / 38414.16, 3);
  });

  it('warns between the catalog-X limit and the X = 0 limit', () => {
    const { findings } = run({ mass: { values: [1] }, luminosity: { values: [5e4] } });
    expect(findings.map((f) => f.severity)).toEqual(['warning']);
    expect(findings[0].values.gammaE).toBeCloseTo(5e4 / 38414.16, 4);
  });

  it('stays silent for real very massive stars close to the limit', () => {
    // R136a1: M = 265 M_sun, L = 8.7e6 L_sun, Gamma_e = 0.855 at X = 0.7 (physics-reference.md §6;
    // Crowther et al. 2010 values as quoted there). An O star of 60 M_sun at 5.1e5 L_sun (Gamma 0.22).
    const { findings, reports } = run({ mass: { values: [265, 60] }, luminosity: { values: [8.7e6, 5.1e5] } });
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(2);
  });

  it('judges L minus k sigma, so an error bar alone does not make a star super-Eddington', () => {
    // 7e4 with a 1e4 error: at L - 3 sigma = 4e4 it is only above the X = 0.7 limit (warning);
    // with a 2e4 error L - 3 sigma = 1e4, well inside.
    const a = run({ mass: { values: [1] }, luminosity: { values: [7e4], err: [1e4] } });
    expect(a.findings.map((f) => f.severity)).toEqual(['warning']);
    const b = run({ mass: { values: [1] }, luminosity: { values: [7e4], err: [2e4] } });
    expect(b.findings).toEqual([]);
    const c = run({ mass: { values: [1] }, luminosity: { values: [7e4], err: [2e4] } }, { sigmas: '0' });
    expect(c.findings.map((f) => f.severity)).toEqual(['error']);
  });

  it('never fires on a luminosity whose error reaches zero (e_L >= L): its lower bound is unbounded', () => {
    // 2e5 +- 3e5 L_sun for 1 M_sun: L - 3 sigma is below zero, so nothing rules out a normal star.
    const a = run({ mass: { values: [1] }, luminosity: { values: [2e5], err: [3e5] } });
    expect(a.findings).toEqual([]);
    expect(a.reports[0].checked).toBe(1);
    // With sigmas = 0 the value itself is judged, error or not.
    const b = run({ mass: { values: [1] }, luminosity: { values: [2e5], err: [3e5] } }, { sigmas: '0' });
    expect(b.findings.map((f) => f.severity)).toEqual(['error']);
  });

  it('uses M plus k sigma of the mass', () => {
    // 5e4 L_sun needs M > 1.30 M_sun at X = 0.7; M = 1.0 +- 0.15 reaches 1.45 at 3 sigma.
    const { findings } = run({ mass: { values: [1], err: [0.15] }, luminosity: { values: [5e4] } });
    expect(findings).toEqual([]);
  });

  it('takes X from a column where one is bound, and the parameter otherwise', () => {
    // X = 0 raises the limit to 65 304 L_sun per M_sun, so 5e4 passes; X = 1 lowers it to 32 652.
    const { findings } = run({ mass: { values: [1, 1] }, luminosity: { values: [5e4, 5e4] }, hydrogenFraction: { values: [0, NaN] } });
    expect(findings.map((f) => f.row)).toEqual([2]);
    const x1 = run({ mass: { values: [1] }, luminosity: { values: [3.5e4] } }, { hydrogenFraction: '1' });
    expect(x1.findings.map((f) => f.severity)).toEqual(['warning']);
  });

  it('accounts for every row: missing values are skipped with a reason', () => {
    const { findings, reports } = run({ mass: { values: [1, NaN, 2] }, luminosity: { values: [NaN, 1, 10] } });
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(1);
    expect(Object.values(reports[0].skipped).reduce((a, b) => a + b, 0)).toBe(2);
  });
});
