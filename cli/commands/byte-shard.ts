/**
 * `check --shard K/N` on a single CSV file: shard K checks the K-th of N byte ranges of the file's
 * data with every rule, writes the findings its batches gave (rows numbered from the start of the
 * range, lines as in the file) in its report, and the rules' states in a folder beside it (`<report>.state/`): a v8
 * serialised InputRunState, and the spill logs of the duplicate rules as files. `starsieve merge`
 * renumbers the findings, absorbs the states in order, and finishes the input, so the merged
 * report is the one a single run writes.
 */
import { mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join, relative, resolve, isAbsolute } from 'node:path';
import { deserialize, serialize } from 'node:v8';
import { InputRun, type InputRunState } from '../../rules/engine/runner.js';
import { ConfigError } from '../../rules/engine/params.js';
import { toBatch } from '../binding/to-batch.js';
import type { Binding } from '../binding/types.js';
import type { Batch, PrepassState } from '../../rules/engine/types.js';
import { spillHandlesIn, type FileSpillHandle } from '../../rules/engine/spill.js';
import { runPrepass } from './prepass.js';
import { openCsvRange, shardRange, type ByteRange, type CsvLayout, type RangeCounts } from '../readers/byte-range.js';
import type { ReaderStats } from '../readers/types.js';
import { FileSpill } from '../spill/file-spill.js';
import { boundMap, inputSummary, planSplit, selectBound } from './input-steps.js';
import { RowTally, type InputResult, type RunInputsOptions } from './run-inputs.js';

/** What a shard of one file records about its range, in the report's `shard.range`. */
export interface ShardRange {
  start: number;
  end: number;
  rows: number;
  blankLines: number;
  /** Line of the first blank line within the range, 0 for none. */
  firstBlankLine: number;
  /** The state folder, relative to the report. */
  state: string;
}

export interface ByteShardPlan {
  layout: CsvLayout;
  bytes: ByteRange;
  binding: Binding;
  /** The file's first rows (RunContext.sample): every shard reads them itself. */
  sample?: Batch;
}

/** The state folder of a shard report. */
export function stateDirOf(report: string): string {
  return `${report}.state`;
}

const STATE_FILE = 'state.v8';

/**
 * The plan of shard `index` (1-based) of `count` for one input, or null when the input cannot be
 * cut in byte ranges (not a plain UTF-8 CSV file, or a rule that cannot save its state); then the
 * shards divide the inputs by file as usual. Every shard comes to the same answer on its own.
 */
export async function planByteShard(path: string, opts: Omit<RunInputsOptions, 'paths' | 'sink'>, index: number, count: number): Promise<ByteShardPlan | null> {
  if (count < 2) return null;
  const plan = await planSplit(path, opts, opts.inputs?.[0] ?? 0);
  return plan && { ...plan, bytes: await shardRange(plan.layout, index - 1, count) };
}

export interface ByteShardResult extends InputResult {
  range: ShardRange;
}

/** Checks the shard's range; findings go to the sink with rows numbered from the range's start. */
export async function runByteShard(opts: RunInputsOptions, plan: ByteShardPlan, report: string): Promise<ByteShardResult> {
  const stateDir = stateDirOf(report);
  rmSync(stateDir, { recursive: true, force: true });
  mkdirSync(stateDir, { recursive: true });
  const spill = new FileSpill({ root: stateDir });
  // A rule that judges against the catalog's own fit (--relation catalog) needs it over the whole
  // file, not the range: every shard makes the first pass over all of it, and keeps the result
  // for the merge, which finishes the input with the same fit.
  const prepass = await runPrepass({ ...opts, paths: [opts.paths[0]] });
  const { reader, counts } = await openCsvRange(plan.layout, plan.bytes, { batchSize: opts.batchSize });
  const index = opts.inputs?.[0] ?? 0;
  const tally = new RowTally(opts.sink);
  try {
    selectBound(reader, plan.binding);
    const run = new InputRun(opts.rules, opts.selection, boundMap(plan.binding), tally, undefined, prepass, spill, plan.sample);
    let rows = 0;
    for await (const raw of reader.batches()) {
      const batch = toBatch(raw, plan.binding, index);
      run.processBatch(batch);
      opts.observe?.(batch);
      rows += raw.length;
      opts.progress?.(opts.paths[0], rows, null);
    }
    const state = run.saveState();
    moveFolders(state, (dir) => relative(stateDir, dir));
    const saved: ShardState = { stats: { ...reader.stats }, counts, state, prepass: prepass ? [...prepass] : null };
    writeFileSync(join(stateDir, STATE_FILE), serialize(saved));
    const range: ShardRange = {
      start: plan.bytes.start,
      end: plan.bytes.end,
      rows: reader.stats.rows,
      blankLines: counts.blanks.count,
      firstBlankLine: counts.blanks.firstLine,
      state: relative(resolve(report, '..'), stateDir) || '.',
    };
    return {
      binding: plan.binding,
      rules: run.reportsSoFar(),
      summary: inputSummary(index, opts.paths[0], reader.format, reader.stats, reader.notes ?? [], plan.binding, tally.rows.size),
      range,
    };
  } finally {
    await reader.close();
  }
}

export interface ShardState {
  stats: ReaderStats;
  counts: RangeCounts;
  state: InputRunState;
  /** The first-pass states over the whole file, by rule id, when a rule asked for one. */
  prepass: [string, PrepassState][] | null;
}

/** A shard's saved state, from the folder its report names. */
export function readShardState(report: string, range: ShardRange): ShardState {
  const dir = resolve(report, '..', range.state);
  let bytes: Buffer;
  try {
    bytes = readFileSync(join(dir, STATE_FILE));
  } catch {
    throw new ConfigError(`${report}: its state folder ${dir} is missing or unreadable (keep it beside the report until the merge)`);
  }
  let saved: ShardState;
  try {
    saved = deserialize(bytes) as ShardState;
  } catch {
    throw new ConfigError(`${join(dir, STATE_FILE)}: not a shard state this version of Node can read (merge with the Node that ran the shards)`);
  }
  moveFolders(saved.state, (d) => (isAbsolute(d) ? d : resolve(dir, d)));
  return saved;
}

/**
 * File spill handles name their folders; in a state file they are written relative to the state
 * folder, so the shard outputs may be moved (or gathered from other machines) before the merge.
 * Rewrites every folder a state's handles name (nested runs included), in place.
 */
function moveFolders(state: unknown, f: (dir: string) => string): void {
  const walk = (h: FileSpillHandle) => {
    h.dir = f(h.dir);
    for (const s of h.segments) if (typeof s !== 'string') walk(s);
  };
  for (const h of spillHandlesIn(state)) if (h.spillHandle === 'files') walk(h);
}
