/**
 * Worker threads must not change a single finding: a pipelined input and several inputs checked
 * at once give the same findings, in the same order, and the same accounting as one thread.
 */
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ALL_RULES } from '../../rules/checks/index.js';
import { selectRules } from '../../rules/engine/runner.js';
import type { Finding } from '../../rules/engine/types.js';
import { runInputs, type InputResult } from '../../cli/commands/run-inputs.js';
import { REPO } from '../helpers/cli.js';

const DEMO = join(REPO, 'sample-catalogs/thistlewood-dr1');

async function check(paths: string[], jobs: number, batchSize = 256): Promise<{ findings: Finding[]; results: InputResult[]; observed: number }> {
  const findings: Finding[] = [];
  let observed = 0;
  const results = await runInputs({
    paths,
    rules: selectRules(ALL_RULES, {}),
    selection: {},
    bind: { bind: {}, units: {} },
    batchSize,
    jobs,
    threadMinBytes: 0,
    sink: { push: (f) => findings.push(f) },
    observe: jobs === 0 ? undefined : (b) => (observed += b.length),
  });
  return { findings, results, observed };
}

describe('checking in worker threads', () => {
  it('gives one input the findings of a single-thread run when it is pipelined over two threads', async () => {
    const one = await check([`${DEMO}.csv`], 1);
    const two = await check([`${DEMO}.csv`], 2);
    expect(one.findings.length).toBeGreaterThan(100);
    expect(two.findings).toEqual(one.findings);
    expect(two.results).toEqual(one.results);
    // Every batch still reaches the plot data.
    expect(two.observed).toBe(3000);
  }, 60_000);

  it('gives several inputs, each in a thread of its own, the findings of a single-thread run in input order', async () => {
    const paths = [`${DEMO}.csv`, `${DEMO}.arrow`, `${DEMO}.fits`, `${DEMO}.vot`];
    const findings: Finding[][] = [];
    const results: InputResult[][] = [];
    for (const jobs of [1, 2, 3]) {
      const r = await runInputs({
        paths,
        rules: selectRules(ALL_RULES, {}),
        selection: {},
        bind: { bind: {}, units: {} },
        batchSize: 512,
        jobs,
        threadMinBytes: 0,
        sink: { push: (f) => (findings[jobs - 1] ??= []).push(f) },
      });
      results.push(r);
    }
    expect(findings[0].map((f) => f.input)).toEqual([...findings[0].map((f) => f.input)].sort((a, b) => a - b));
    expect(findings[1]).toEqual(findings[0]);
    expect(findings[2]).toEqual(findings[0]);
    expect(results[1]).toEqual(results[0]);
    expect(results[2]).toEqual(results[0]);
  }, 120_000);

  it('reports an input error from a worker as the same one-line error', async () => {
    await expect(check([join(REPO, 'no-such-file.csv')], 2)).rejects.toThrow(/no-such-file/);
  }, 60_000);
});
