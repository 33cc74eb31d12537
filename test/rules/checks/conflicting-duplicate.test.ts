import { describe, expect, it } from 'vitest';
import { conflictingDuplicate } from '../../../rules/checks/conflicting-duplicate.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

const run = (b: ReturnType<typeof makeBatch>[], params: Record<string, string> = {}) => runRules([conflictingDuplicate], b, { params: { 'conflicting-duplicate': params } });

describe('conflicting-duplicate', () => {
  it('fires on the PHL hosts whose masses disagree (PHL PROVENANCE.md)', () => {
    // BD+20 2457: 10.83 +- 22.96 and 2.80 +- 1.5; HIP 57274: 0.29 +- 0.30 and 0.73 +- 0.05;
    // K2-38: 2.24 +- 1.67 and 1.07 +- 0.05 M_sun (values and errors as written in the PHL table).
    const b = makeBatch(
      { mass: { values: [10.83, 2.8, 0.29, 0.73, 2.24, 1.07], err: [22.96, 1.5, 0.3, 0.05, 1.67, 0.05] } },
      { id: ['BD+20 2457', 'BD+20 2457', 'HIP 57274', 'HIP 57274', 'K2-38', 'K2-38'] },
    );
    const { findings } = run([b]);
    expect(findings.map((f) => [f.id, f.row, f.severity, f.values.firstRow])).toEqual([
      ['BD+20 2457', 2, 'warning', 1],
      ['HIP 57274', 4, 'warning', 3],
      ['K2-38', 6, 'warning', 5],
    ]);
    expect(findings[0].expected).toMatchObject({ value: 10.83 });
    expect(findings[0].message).toMatch(/factor 3\.87/);
  });

  it('stays silent where the repeats agree within the tolerance or within informative errors', () => {
    // Invented repeats: 0.95 and 1.02 M_sun (7 %); Teff 5700 and 5750 K (0.9 %); 1.0 +- 0.2 and
    // 1.3 +- 0.2 M_sun (26 %, but 1.1 combined sigma with errors of 20 %).
    const b = makeBatch(
      { mass: { values: [0.95, 1.02, 1.0, 1.3], err: [0.05, 0.05, 0.2, 0.2] }, teff: { values: [5700, 5750, 6000, 6000] } },
      { id: ['A', 'A', 'B', 'B'] },
    );
    const { findings, reports } = run([b]);
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(4);
  });

  it('edge: compares with the first row only, across batches; one finding names every conflicting value', () => {
    // CoRoT-20 in the NASA table: R 1.02 +- 0.05 and 1.37 +- 0.04, Teff 5880 +- 90 and 4947.5 +- 65.51 (PSCompPars).
    const a = makeBatch({ radius: { values: [1.02], err: [0.05] }, teff: { values: [5880], err: [90] } }, { id: ['CoRoT-20'] }, 1);
    const b = makeBatch({ radius: { values: [1.37, 1.02], err: [0.04, 0.05] }, teff: { values: [4947.5, 5880], err: [65.51, 90] } }, { id: ['CoRoT-20', 'CoRoT-20'] }, 2);
    const { findings } = run([a, b]);
    expect(findings).toHaveLength(1);
    expect(findings[0].row).toBe(2);
    expect(findings[0].columns).toEqual(['id', 'radius', 'teff']);
    // With relTolerance 0.5 the 34 % radius difference passes; the 16 % Teff difference still exceeds the 8 % Teff tolerance.
    const loose = run([a, b], { relTolerance: '0.5' });
    expect(loose.findings[0].columns).toEqual(['id', 'teff']);
  });

  it('edge: rows without an id are skipped with a reason; without an id column the rule says so', () => {
    // Invented masses; only the ids matter.
    const b = makeBatch({ mass: { values: [1, 2] } }, { id: ['x', null as unknown as string] });
    expect(run([b]).reports[0].skipped).toEqual({ 'id missing': 1 });
    expect(run([makeBatch({ mass: { values: [1, 2] } })]).reports[0].skipped).toEqual({ 'no id column bound': 2 });
  });
});
