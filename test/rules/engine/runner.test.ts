import { describe, expect, it } from 'vitest';
import { rowFinding } from '../../../rules/engine/findings.js';
import { ConfigError } from '../../../rules/engine/params.js';
import { selectRules } from '../../../rules/engine/runner.js';
import type { Rule, Severity } from '../../../rules/engine/types.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

/** A rule that fires on the listed rows (0-based batch indexes) and counts every row as checked. */
function firing(id: string, stage: 'screen' | 'judge', severity: Severity, rows: number[]): Rule {
  return {
    meta: {
      id,
      title: id,
      severity,
      stage,
      needs: ['mass'],
      uses: [],
      params: [{ name: 'k', type: 'number', default: 1, min: 0, description: 'a test parameter' }],
      references: [{ cite: 'test' }],
      doc: { catches: '', why: '', fires: '', silent: '', cautions: '' },
    },
    start: () => ({
      check(batch, out, stats) {
        stats.checked += batch.length;
        for (const i of rows) out.push(rowFinding(batch, i, { rule: id, severity, columns: [], values: {}, message: id }));
      },
    }),
  };
}

describe('InputRun', () => {
  const batch = () => makeBatch({ mass: { values: [1, 2, 3] } });

  it('runs screening rules first and emits findings in row order', () => {
    const rules = [firing('judge-a', 'judge', 'warning', [2, 0]), firing('screen-b', 'screen', 'error', [1])];
    const { findings } = runRules(rules, [batch()]);
    expect(findings.map((f) => [f.row, f.rule])).toEqual([
      [1, 'judge-a'],
      [2, 'screen-b'],
      [3, 'judge-a'],
    ]);
  });

  it('links findings on one row to their likely root cause', () => {
    const rules = [firing('judge-a', 'judge', 'error', [0]), firing('judge-b', 'judge', 'warning', [0]), firing('screen-c', 'screen', 'warning', [0])];
    const { findings } = runRules(rules, [batch()]);
    const by = Object.fromEntries(findings.map((f) => [f.rule, f]));
    expect(by['screen-c'].cause).toBeNull();
    expect(by['judge-a'].cause).toBe('screen-c');
    expect(by['judge-b'].cause).toBe('screen-c');
    expect(by['judge-a'].related).toEqual(['screen-c', 'judge-b']);
  });

  it('skips a rule whose quantities are not bound, for every row, with the reason', () => {
    const r = firing('needs-mass', 'judge', 'error', [0]);
    const { findings, reports } = runRules([r], [makeBatch({ radius: { values: [1, 2] } })]);
    expect(findings).toEqual([]);
    expect(reports[0].status).toBe('skipped');
    expect(reports[0].skipped).toEqual({ 'needs mass, not bound in this input': 2 });
  });

  it('rejects unknown rules and parameters before reading anything', () => {
    const rules = [firing('a', 'judge', 'error', [])];
    expect(() => selectRules(rules, { only: ['b'] })).toThrow(ConfigError);
    expect(() => selectRules(rules, { params: { a: { nope: 1 } } })).toThrow(/no parameter "nope"/);
    expect(() => selectRules(rules, { params: { a: { k: 'x' } } })).toThrow(/needs a number/);
    expect(() => selectRules(rules, { params: { a: { k: -1 } } })).toThrow(/>= 0/);
  });
});
