import { describe, expect, it } from 'vitest';
import { surfaceGravityMismatch } from '../../../rules/checks/surface-gravity-mismatch.js';
import { loggFromMassRadius } from '../../../rules/physics/stellar.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

type Cols = Parameters<typeof makeBatch>[0];
const run = (cols: Cols, params: Record<string, string> = {}) =>
  runRules([surfaceGravityMismatch], [makeBatch(cols)], { params: { 'surface-gravity-mismatch': params } });
const rowsOf = (r: ReturnType<typeof run>) => r.findings.filter((f) => f.scope === 'row');
const accounted = (r: ReturnType<typeof run>) => r.reports[0].checked + Object.values(r.reports[0].skipped).reduce((a, b) => a + b, 0);
const fill = (n: number, v: number) => Array.from({ length: n }, () => v);

describe('surface-gravity-mismatch', () => {
  it('stays silent for the Sun, Sirius A (quoted 4.33 against 4.285) and Sirius B', () => {
    // logg(1, 1) = 4.438068 (IAU 2015 B3 nominal GM and R; physics-reference.md §1, §11).
    // Sirius A: M 2.063 +- 0.023, R 1.713 +- 0.009, quoted logg 4.33 with a 0.1 dex error; M and R give
    // 4.28505 (physics-reference.md §6, §11, trap T9). Sirius B: M 1.018, R 0.008098 give 8.62906 (§11).
    const r = run({
      mass: { values: [1, 2.063, 1.018], err: [0, 0.023, 0.011] },
      radius: { values: [1, 1.713, 0.008098], err: [0, 0.009, NaN] },
      logg: { values: [4.438, 4.33, 8.63], err: [NaN, 0.1, NaN] },
    });
    expect(r.findings).toEqual([]);
    expect(r.reports[0].checked).toBe(3);
    expect(loggFromMassRadius(2.063, 1.713)).toBeCloseTo(4.28505, 4);
    expect(loggFromMassRadius(1.018, 0.008098)).toBeCloseTo(8.62906, 4);
  });

  it('judges a white dwarf like any star', () => {
    // Sirius B's M and R (physics-reference.md §6) with a logg of 7.5 +- 0.1 instead of 8.63.
    const r = run({ mass: { values: [1.018] }, radius: { values: [0.008098] }, logg: { values: [7.5], err: [0.1] } });
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].severity).toBe('warning');
    expect(r.findings[0].expected?.value).toBeCloseTo(8.629, 3);
    expect(r.findings[0].suggestion?.value).toBeCloseTo(8.629, 3);
  });

  it('names cgs vs SI when the Sun shows logg 2.44, and suggests the cgs value', () => {
    // physics-reference.md §9: logg in SI is 2 dex below cgs, so the Sun would show 2.44.
    const r = run({ mass: { values: [1] }, radius: { values: [1] }, logg: { values: [2.438] } });
    expect(r.findings).toHaveLength(1);
    const f = r.findings[0];
    // No stated error: the default 0.1 dex with the 0.05 tolerance makes the 2 dex match decisive.
    expect(f.severity).toBe('error');
    expect(f.values.likelyUnit).toBe('log(m.s-2)');
    expect(f.message).toMatch(/m s\^-2 rather than cm s\^-2/);
    expect(f.suggestion?.value).toBeCloseTo(4.438, 3);
  });

  it('names the 2 dex only as a warning where the logg error is loose, as on a model grid', () => {
    // Grid logg 2.5 with the flat 0.25 dex error of CARMENES (carmenes-mdwarfs PROVENANCE.md), for
    // the Sun's M and R (IAU 2015 B3): 1.94 dex low, near 2 dex but not decisively.
    const r = run({ mass: { values: [1] }, radius: { values: [1] }, logg: { values: [2.5], err: [0.25] } });
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].severity).toBe('warning');
    expect(r.findings[0].values.likelyUnit).toBe('log(m.s-2)');
  });

  it('makes one column error when most of the column is in SI, not one per row', () => {
    const n = 12;
    const r = run({ mass: { values: fill(n, 1) }, radius: { values: fill(n, 1) }, logg: { values: fill(n, 2.44) } });
    expect(rowsOf(r)).toEqual([]);
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].scope).toBe('column');
    expect(r.findings[0].severity).toBe('error');
    expect(r.findings[0].message).toMatch(/m s\^-2 \(SI\)/);
    expect(r.reports[0].details.columnUnitVerdict).toBe('log(m.s-2)');
  });

  it('judges grid-quantised logg with its stated error and notes the grid once', () => {
    // 20 rows on a 0.5 dex grid with elogg 0.25 (CARMENES PROVENANCE.md). 18 sit at 4.5 for the
    // Sun's M and R (0.06 dex off: silent); two at 3.0 are 1.44 dex low, 5.6 sigma.
    const logg = fill(20, 4.5);
    logg[3] = 3.0;
    logg[11] = 3.0;
    const r = run({ mass: { values: fill(20, 1) }, radius: { values: fill(20, 1) }, logg: { values: logg, err: fill(20, 0.25) } });
    expect(rowsOf(r).map((f) => [f.row, f.severity])).toEqual([
      [4, 'warning'],
      [12, 'warning'],
    ]);
    expect(rowsOf(r)[0].values.likelyUnit).toBeUndefined();
    const note = r.findings.filter((f) => f.scope === 'column');
    expect(note).toHaveLength(1);
    expect(note[0].severity).toBe('note');
    expect(note[0].values.gridStepDex).toBe(0.5);
  });

  it('takes the radius error on the side that faces the expectation', () => {
    // logg 4.9 for M = R = 1 (0.46 dex high): a smaller radius raises G M / R^2, so only the lower
    // radius error can close the gap.
    const lo = run({ mass: { values: [1] }, radius: { values: [1], errLo: [0.3], errHi: [0.01] }, logg: { values: [4.9] } });
    expect(lo.findings).toEqual([]);
    const hi = run({ mass: { values: [1] }, radius: { values: [1], errLo: [0.01], errHi: [0.3] }, logg: { values: [4.9] } });
    expect(hi.findings).toHaveLength(1);
  });

  it('is simply not run on a white-dwarf table without mass and radius (as MWDD)', () => {
    // MWDD export (mwdd-white-dwarfs PROVENANCE.md): teff and logg only, logg about 8.
    const r = runRules([surfaceGravityMismatch], [makeBatch({ logg: { values: [8.04, 7.9] }, teff: { values: [12000, 8000] } })]);
    expect(r.findings).toEqual([]);
    expect(r.reports[0].status).toBe('skipped');
    expect(r.reports[0].reason).toMatch(/mass, radius/);
  });

  it('accounts for every row', () => {
    const r = run({ mass: { values: [1, NaN, 1, -1] }, radius: { values: [1, 1, 1, 1] }, logg: { values: [4.44, 4.44, NaN, 4.44] } });
    expect(r.reports[0].checked).toBe(1);
    expect(accounted(r)).toBe(4);
  });
});
