import { availableParallelism } from 'node:os';
import { statSync } from 'node:fs';
import { InputRun, type RuleReport, type RuleSelection } from '../../rules/engine/runner.js';
import type { Batch, Finding, FindingSink, PrepassState, Rule } from '../../rules/engine/types.js';
import { toBatch } from '../binding/bind.js';
import type { Binding, BindOptions } from '../binding/types.js';
import { runPipelined, runRanges, runWhole } from '../parallel/threads.js';
import { planRanges } from '../readers/byte-range.js';
import type { Position, ReaderSettings } from '../parallel/protocol.js';
import type { RawBatch } from '../readers/types.js';
import type { InputSummary } from '../reports/terminal.js';
import { FILE_SPILL } from '../spill/file-spill.js';
import { bindFromFirstBatch, boundMap, inputSummary, openInput, planSplit } from './input-steps.js';
import { runPrepass } from './prepass.js';

export interface RunInputsOptions extends ReaderSettings {
  paths: readonly string[];
  rules: readonly Rule[];
  selection: RuleSelection;
  bind: BindOptions;
  sink: FindingSink;
  /** Called after each batch with rows read so far and, where the reader knows, how far it has got. */
  progress?: (path: string, rows: number, position: Position) => void;
  /** Called with each batch after the rules have run over it (plots). */
  observe?: (batch: Batch) => void;
  /**
   * Threads to use; 1 runs everything here. With more, several inputs are checked at once, or
   * one large input is read and screened in one thread while the other judges. Default 1.
   */
  jobs?: number;
  /**
   * The input number of each path, when these paths are a part of a larger run (a shard); findings
   * and summaries carry it. Default: the position in `paths`.
   */
  inputs?: readonly number[];
  /** Inputs smaller than this in all stay in one thread (default THREAD_MIN_BYTES); tests lower it. */
  threadMinBytes?: number;
}

export interface InputResult {
  summary: InputSummary;
  binding: Binding;
  rules: RuleReport[];
}

/**
 * Threads from which one CSV file is cut into byte ranges rather than pipelined. With two, the
 * pipeline measured faster on the 1M-row benchmark CSV (11.3 s against 13.3 s for all rules,
 * 4.0 s against 4.9 s for the headline rules): the ranges pay for a pass over the file to place
 * the cuts, a second read of the sample, a worker start each and the final merge, and a pipeline
 * keeps the main thread busy too. Ranges scale with the threads; a pipeline stops at two.
 */
export const RANGES_MIN_JOBS = 3;

/** Below this much input, starting a thread costs more than it saves. */
export const THREAD_MIN_BYTES = 8 << 20;

/** The input number of the path at `pos`. */
export function inputNumber(opts: RunInputsOptions, pos: number): number {
  return opts.inputs?.[pos] ?? pos;
}

/** Counts distinct rows with findings per input; memory grows with findings, not with rows. */
export class RowTally implements FindingSink {
  readonly rows = new Set<number>();
  constructor(private readonly next: FindingSink) {}
  push(f: Finding): void {
    if (f.row !== null) this.rows.add(f.row);
    this.next.push(f);
  }
}

/** The number of threads `--jobs` means when it is not given: one per core. */
export function defaultJobs(): number {
  return Math.max(1, availableParallelism());
}

function sizeOf(path: string): number {
  if (path === '-') return 0;
  try {
    return statSync(path).size;
  } catch {
    return 0;
  }
}

/**
 * Reads each input, binds its columns, and streams its batches through the rules; findings reach
 * the sink in input order and row order however many threads do the work.
 */
export async function runInputs(opts: RunInputsOptions): Promise<InputResult[]> {
  // First pass, only for rules whose parameters ask for one (--relation catalog); threads not yet.
  const prepass = await runPrepass(opts);
  const jobs = prepass ? 1 : Math.max(1, Math.floor(opts.jobs ?? 1));
  const files = opts.paths.filter((p) => p !== '-');
  const bytes = files.reduce((a, p) => a + sizeOf(p), 0);
  if (jobs > 1 && files.length === opts.paths.length && bytes >= (opts.threadMinBytes ?? THREAD_MIN_BYTES)) {
    // Several inputs: one per thread. Plots need every batch here, so they take the other way.
    if (opts.paths.length > 1 && !opts.observe) return runWhole(opts, jobs);
    const results: InputResult[] = [];
    for (let index = 0; index < opts.paths.length; index++) {
      results.push((jobs >= RANGES_MIN_JOBS ? await runSplit(index, opts, jobs) : null) ?? (await runPipelined(index, opts)));
    }
    return results;
  }
  const results: InputResult[] = [];
  for (let index = 0; index < opts.paths.length; index++) results.push(await runOne(index, opts, prepass));
  return results;
}

/**
 * One plain CSV file in byte ranges, a thread per range; null when it cannot be split (another
 * format, compressed or not UTF-8, quoted fields across every possible cut, or a rule that
 * cannot save its state), and the caller takes the two-thread pipeline instead.
 */
export async function runSplit(pos: number, opts: RunInputsOptions, jobs: number): Promise<InputResult | null> {
  if (opts.observe) return null;
  const plan = await planSplit(opts.paths[pos], opts, inputNumber(opts, pos));
  const ranges = plan && (await planRanges(plan.layout, jobs));
  if (!plan || !ranges) return null;
  return runRanges(pos, opts, plan.layout, ranges, plan.binding, plan.sample);
}

/** One input, all in this thread. */
async function runOne(pos: number, opts: RunInputsOptions, prepass?: Map<string, PrepassState>): Promise<InputResult> {
  const path = opts.paths[pos];
  const index = inputNumber(opts, pos);
  const reader = await openInput(path, opts);
  try {
    const { it, ahead, binding, sampleBatch } = await bindFromFirstBatch(reader, opts.bind, index);
    const tally = new RowTally(opts.sink);
    const run = new InputRun(opts.rules, opts.selection, boundMap(binding), tally, undefined, prepass, FILE_SPILL, sampleBatch);
    let rows = 0;
    const feed = (raw: RawBatch) => {
      const batch = toBatch(raw, binding, index);
      run.processBatch(batch);
      opts.observe?.(batch);
      rows += raw.length;
      opts.progress?.(path, rows, reader.progress?.() ?? null);
    };
    for (const raw of ahead) feed(raw);
    for (let r = await it.next(); !r.done; r = await it.next()) feed(r.value);
    const ruleReports = run.finish();
    return {
      binding,
      rules: ruleReports,
      summary: inputSummary(index, path, reader.format, reader.stats, reader.notes ?? [], binding, tally.rows.size),
    };
  } finally {
    await reader.close();
  }
}
