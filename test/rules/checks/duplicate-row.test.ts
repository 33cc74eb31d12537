import { describe, expect, it } from 'vitest';
import { duplicateRow } from '../../../rules/checks/duplicate-row.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

describe('duplicate-row', () => {
  it('fires on a row repeated in every bound value, naming the first', () => {
    // The Sun's nominal values (IAU 2015 B3: 1 M_sun, 1 R_sun, 5772 K) typed twice; the K dwarf of
    // row 2 (0.8 M_sun, 0.75 R_sun, 5100 K) is invented, only its difference matters.
    const b = makeBatch(
      { mass: { values: [1, 0.8, 1], err: [0.05, 0.04, 0.05] }, radius: { values: [1, 0.75, 1] }, teff: { values: [5772, 5100, 5772] } },
      { id: ['TWC-1', 'TWC-2', 'TWC-1'] },
    );
    const { findings } = runRules([duplicateRow], [b]);
    const rows = findings.filter((f) => f.scope === 'row');
    expect(rows.map((f) => [f.row, f.severity, f.values.firstRow])).toEqual([[3, 'warning', 1]]);
    expect(rows[0].message).toMatch(/row 3 repeats row 1 exactly in all 4 bound columns/);
    expect(findings.find((f) => f.scope === 'column')?.severity).toBe('note');
  });

  it('stays silent where one value differs, or the id does, or the row has almost nothing', () => {
    // Two planets of one host with one stellar value changed (the Sun's values, IAU 2015 B3, and an
    // invented 1.01); two companions with only an id and an invented parallax (CARMENES companions
    // often have only astrometry, PROVENANCE).
    const b = makeBatch(
      { mass: { values: [1, 1.01, NaN, NaN] }, teff: { values: [5772, 5772, NaN, NaN] }, parallax: { values: [10, 10, 50, 50] } },
      { id: ['A', 'A', 'B', 'B'] },
    );
    const { findings, reports } = runRules([duplicateRow], [b]);
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(2);
    expect(reports[0].skipped).toEqual({ 'fewer than 2 numeric values': 2 });
  });

  it('edge: uncertainties count, and a table whose host rows repeat by design gets one note', () => {
    // The Sun's mass and Teff (IAU 2015 B3) with two invented errors.
    const withErr = makeBatch({ mass: { values: [1, 1], err: [0.05, 0.06] }, teff: { values: [5772, 5772] } });
    expect(runRules([duplicateRow], [withErr]).findings).toEqual([]);
    // 40 invented dwarf hosts (0.5-0.9 M_sun) with their stellar row repeated for a second planet:
    // 40 of 80 rows (the PHL pattern, 1032 of 5216 rows, PROVENANCE).
    const n = 40;
    const id = Array.from({ length: 2 * n }, (_, i) => `host-${i >> 1}`);
    const mass = id.map((_, i) => 0.5 + (i >> 1) * 0.01);
    const b = makeBatch({ mass: { values: mass }, teff: { values: mass.map((m) => 4000 + 1000 * m) } }, { id });
    const { findings } = runRules([duplicateRow], [b]);
    expect(findings).toHaveLength(1);
    expect(findings[0].message).toMatch(/40 of 80 rows repeat.*share their id/);
  });
});
