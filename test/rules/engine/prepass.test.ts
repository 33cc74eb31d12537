import { describe, expect, it } from 'vitest';
import { PrepassRun, mergePrepassStates, rulesWantingPrepass } from '../../../rules/engine/prepass.js';
import type { Quantity } from '../../../rules/engine/quantities.js';
import { InputRun, selectRules } from '../../../rules/engine/runner.js';
import type { PrepassState, Rule } from '../../../rules/engine/types.js';
import { makeBatch } from '../../helpers/batch.js';

/**
 * A rule whose first pass sums the masses of the catalog and whose judging pass reports that sum
 * in its summary: enough to see the engine run, merge and hand over the state without knowing
 * the rule.
 */
const summing: Rule = {
  meta: {
    id: 'summing',
    title: 'summing',
    severity: 'note',
    stage: 'judge',
    needs: ['mass'],
    uses: [],
    params: [{ name: 'twoPass', type: 'boolean', default: false, description: 'ask for the first pass' }],
    references: [{ cite: 'test' }],
    doc: { catches: '', why: '', fires: '', silent: '', cautions: '' },
  },
  prepass: {
    wanted: (params) => params.twoPass === true,
    begin() {
      let sum = 0;
      let n = 0;
      return {
        observe(batch) {
          const m = batch.quantities.mass!.value;
          for (let i = 0; i < batch.length; i++) {
            sum += m[i];
            n++;
          }
        },
        result: () => ({ sum, n }),
      };
    },
    merge: (a, b) => ({ sum: (a.sum as number) + (b.sum as number), n: (a.n as number) + (b.n as number) }),
  },
  start(ctx) {
    return {
      check(batch, _out, stats) {
        stats.checked += batch.length;
      },
      summary: () => ({ prepass: ctx.prepass ?? null }),
    };
  },
};

const bound = new Map<Quantity, { column: string; unit: string }>([['mass', { column: 'mass', unit: 'solMass' }]]);
const wanting = { params: { summing: { twoPass: true } } };

describe('the optional first pass', () => {
  it('is wanted only where the parameters ask for it, so a default run stays one pass', () => {
    expect(rulesWantingPrepass([summing], {})).toEqual([]);
    expect(rulesWantingPrepass([summing], wanting).map((r) => r.meta.id)).toEqual(['summing']);
    expect(new PrepassRun([summing], {}, bound).idle).toBe(true);
    // A rule whose quantities are not bound in an input observes nothing there.
    expect(new PrepassRun([summing], wanting, new Map()).idle).toBe(true);
  });

  it('merges the states of several inputs or shards with the rule`s own merge, and hands the result to start', () => {
    const parts: Map<string, PrepassState>[] = [];
    for (const values of [[1, 2], [3], [4, 5]]) {
      const run = new PrepassRun([summing], wanting, bound);
      run.observe(makeBatch({ mass: { values } }));
      parts.push(run.states());
    }
    // A part where the rule did not run is skipped.
    parts.push(new Map());
    const merged = mergePrepassStates([summing], parts);
    expect(merged.get('summing')).toEqual({ sum: 15, n: 5 });
    // The state is plain JSON.
    expect(JSON.parse(JSON.stringify(merged.get('summing')))).toEqual({ sum: 15, n: 5 });
    const rules = selectRules([summing], wanting);
    const run = new InputRun(rules, wanting, bound, { push: () => {} }, undefined, merged);
    run.processBatch(makeBatch({ mass: { values: [1] } }));
    expect(run.finish()[0].details).toEqual({ prepass: { sum: 15, n: 5 } });
  });

  it('leaves ctx.prepass undefined for a one-pass run', () => {
    const run = new InputRun([summing], {}, bound, { push: () => {} });
    run.processBatch(makeBatch({ mass: { values: [1] } }));
    expect(run.finish()[0].details).toEqual({ prepass: null });
  });
});
