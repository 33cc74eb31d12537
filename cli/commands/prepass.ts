import { ConfigError } from '../../rules/engine/params.js';
import { PrepassRun, mergePrepassStates, rulesWantingPrepass } from '../../rules/engine/prepass.js';
import type { PrepassState } from '../../rules/engine/types.js';
import { toBatch } from '../binding/bind.js';
import { bindFromFirstBatch, boundMap, openInput } from './input-steps.js';
import type { RunInputsOptions } from './run-inputs.js';

/**
 * The first pass over every input, for rules whose parameters ask for one (`--relation catalog`):
 * each input is opened with the same reader settings and bound by the same steps as the judging
 * pass, its batches go to the rules' first passes, and the per-input states are merged into one per
 * rule. Returns undefined, having read nothing, when no selected rule wants a first pass, so a
 * default run stays one pass. The merged states are plain JSON, so a sharded run can write them and
 * merge them later (each rule's `prepass.merge`).
 */
export async function runPrepass(opts: RunInputsOptions): Promise<Map<string, PrepassState> | undefined> {
  if (rulesWantingPrepass(opts.rules, opts.selection).length === 0) return undefined;
  if (opts.paths.includes('-')) throw new ConfigError('a rule here needs two passes over its input (--relation catalog), and standard input can be read only once: give a file');
  const parts: Map<string, PrepassState>[] = [];
  for (let index = 0; index < opts.paths.length; index++) {
    const reader = await openInput(opts.paths[index], opts);
    try {
      const { it, ahead, binding } = await bindFromFirstBatch(reader, opts.bind);
      const run = new PrepassRun(opts.rules, opts.selection, boundMap(binding));
      if (run.idle) continue;
      for (const raw of ahead) run.observe(toBatch(raw, binding, index));
      for (let r = await it.next(); !r.done; r = await it.next()) run.observe(toBatch(r.value, binding, index));
      parts.push(run.states());
    } finally {
      await reader.close();
    }
  }
  return mergePrepassStates(opts.rules, parts);
}
