/**
 * Checking in worker threads, with findings identical to a single-thread run:
 * - several inputs: each runs whole in a thread of its own; findings are handed on in input order
 *   (a later input's wait until the earlier ones are done);
 * - one input: a pipeline. The worker reads, binds and checks each batch with the first rules in
 *   rule order (the screening rules and some judging ones); this thread checks it with the rest,
 *   sorts the batch's findings and writes them. Both halves see the same batches in the same rule
 *   order, so nothing about the findings depends on the split.
 */
import { Worker } from 'node:worker_threads';
import { ConfigError } from '../../rules/engine/params.js';
import { InputRun, shiftFinding, type InputRunState, type RuleReport } from '../../rules/engine/runner.js';
import type { Batch, Finding, RowShift, Rule } from '../../rules/engine/types.js';
import { blankLinesNote } from '../readers/csv.js';
import type { ByteRange, CsvLayout, RangeCounts } from '../readers/byte-range.js';
import type { ReaderStats } from '../readers/types.js';
import { BindingError, type Binding } from '../binding/types.js';
import { boundMap, inputSummary } from '../commands/input-steps.js';
import { RowTally, inputNumber, type InputResult, type RunInputsOptions } from '../commands/run-inputs.js';
import { InputError } from '../readers/types.js';
import { FILE_SPILL, discardHandle } from '../spill/file-spill.js';
import { spillHandlesIn, type SpillLog } from '../../rules/engine/spill.js';
import type { WorkerMessage, WorkerTask } from './protocol.js';

/**
 * The worker's entry: next to the bundle when this runs from dist/ (see bin/starsieve.js), else a
 * small shim that registers the TypeScript loader first.
 */
const ENTRY = import.meta.url.endsWith('.mjs') ? new URL('./input-worker.mjs', import.meta.url) : new URL('./worker-entry.mjs', import.meta.url);

/**
 * Where the rule list is cut for a pipeline: the worker also reads and converts the input, and the
 * screening rules that come first are the costly ones, so it takes about a third of the rules
 * (measured on the 1M-row benchmark CSV: 0.25, 0.35 and 0.45 of the rules gave 12.8, 11.8 and
 * 12.3 s).
 */
export function splitPoint(rules: readonly Rule[]): number {
  return Math.max(1, Math.min(rules.length - 1, Math.round(rules.length * 0.35)));
}

function task(pos: number, opts: RunInputsOptions, mode: WorkerTask['mode'], splitAt: number, range?: WorkerTask['range']): WorkerTask {
  return {
    range,
    input: inputNumber(opts, pos),
    path: opts.paths[pos],
    reader: { format: opts.format, delimiter: opts.delimiter, hdu: opts.hdu, table: opts.table, batchSize: opts.batchSize },
    bind: opts.bind,
    selection: opts.selection,
    mode,
    splitAt,
  };
}

/** The error a worker reported, as the class the command line knows how to print. */
function rebuilt(m: Extract<WorkerMessage, { type: 'error' }>): Error {
  if (m.name === 'InputError') return new InputError(m.message, m.path ?? '', m.position ?? null);
  if (m.name === 'BindingError') return new BindingError(m.message, m.column ?? null);
  if (m.name === 'ConfigError') return new ConfigError(m.message);
  return new Error(m.message);
}

function start(t: WorkerTask): Worker {
  return new Worker(ENTRY, { workerData: t });
}

/** One input as a two-thread pipeline. */
export function runPipelined(pos: number, opts: RunInputsOptions): Promise<InputResult> {
  const rules = opts.rules;
  const splitAt = splitPoint(rules);
  const path = opts.paths[pos];
  const index = inputNumber(opts, pos);
  const worker = start(task(pos, opts, 'first-rules', splitAt));
  return new Promise<InputResult>((resolve, reject) => {
    let settled = false;
    let run: InputRun | null = null;
    let binding: Binding | null = null;
    let rows = 0;
    const tally = new RowTally(opts.sink);
    const fail = (e: unknown) => {
      if (settled) return;
      settled = true;
      void worker.terminate();
      reject(e);
    };
    worker.on('message', (m: WorkerMessage) => {
      try {
        if (m.type === 'bound') {
          binding = m.binding;
          run = new InputRun(rules, opts.selection, boundMap(binding), tally, { from: splitAt, to: rules.length }, undefined, FILE_SPILL, m.sample);
        } else if (m.type === 'batch') {
          worker.postMessage({ type: 'ack' });
          run!.processBatch(m.batch, m.findings);
          opts.observe?.(m.batch);
          rows += m.batch.length;
          opts.progress?.(path, rows, m.position);
        } else if (m.type === 'done') {
          const reports = run!.finish(m.part ?? undefined);
          settled = true;
          resolve({ binding: binding!, rules: reports, summary: inputSummary(index, path, m.format, m.stats, m.notes, binding!, tally.rows.size) });
        } else if (m.type === 'error') fail(rebuilt(m));
      } catch (e) {
        fail(e);
      }
    });
    worker.on('error', fail);
    worker.on('exit', (code) => fail(new Error(`a worker thread stopped early (exit code ${code})`)));
  });
}

interface Pending {
  worker: Worker | null;
  /** Messages not yet handed on because an earlier input is still being written (their findings spilled). */
  queue: WorkerMessage[];
  binding: Binding | null;
  rows: number;
  /** Findings that arrived while an earlier input was still being written, kept in temporary files. */
  held: HeldFindings | null;
}

/** Findings per spill partition: the partitions are read back in order, one at a time. */
const HELD_CHUNK = 4096;
const HELD_PARTITIONS = 4096;

/**
 * The findings of an input that is not yet being written, in temporary files rather than in
 * memory, so a fast later input cannot fill the memory while a slow earlier one runs.
 */
class HeldFindings {
  private readonly log: SpillLog = FILE_SPILL.open(1, HELD_PARTITIONS);
  private count = 0;
  private readonly one = new Float64Array(1);

  add(f: Finding): void {
    this.log.append(Math.min(HELD_PARTITIONS - 1, Math.floor(this.count++ / HELD_CHUNK)), this.one, JSON.stringify(f));
  }

  /** Every held finding, in the order held; then the files are gone. */
  flush(sink: { push(f: Finding): void }): void {
    const used = Math.min(HELD_PARTITIONS, Math.ceil(this.count / HELD_CHUNK));
    for (let part = 0; part < used; part++) {
      for (const text of this.log.take(part).texts) sink.push(JSON.parse(text!) as Finding);
    }
    this.log.close();
  }
}

/** Several inputs, each whole in a thread, at most `jobs` at a time; findings in input order. */
export function runWhole(opts: RunInputsOptions, jobs: number): Promise<InputResult[]> {
  const n = opts.paths.length;
  const results: InputResult[] = [];
  const pending: Pending[] = Array.from({ length: n }, () => ({ worker: null, queue: [], binding: null, rows: 0, held: null }));
  let current = 0;
  let launched = 0;
  let running = 0;
  return new Promise<InputResult[]>((resolve, reject) => {
    let settled = false;
    const fail = (e: unknown) => {
      if (settled) return;
      settled = true;
      for (const p of pending) void p.worker?.terminate();
      reject(e);
    };
    /** Hands on what the current input has sent; moves to the next input when it is done. */
    const drain = () => {
      while (!settled && current < n) {
        const p = pending[current];
        let done = false;
        if (p.held) {
          p.held.flush(opts.sink);
          p.held = null;
        }
        while (p.queue.length > 0) {
          const m = p.queue.shift()!;
          if (m.type === 'bound') p.binding = m.binding;
          else if (m.type === 'findings') {
            for (const f of m.findings) opts.sink.push(f);
            p.rows += m.rows;
            if (m.rows > 0) opts.progress?.(opts.paths[current], p.rows, m.position);
          } else if (m.type === 'done') {
            results.push({
              binding: p.binding!,
              rules: m.reports as RuleReport[],
              summary: inputSummary(inputNumber(opts, current), opts.paths[current], m.format, m.stats, m.notes, p.binding!, m.rowsWithFindings),
            });
            done = true;
            break;
          } else if (m.type === 'error') return fail(rebuilt(m));
        }
        if (!done) return;
        current++;
      }
      if (current === n && !settled) {
        settled = true;
        resolve(results);
      }
    };
    const launch = () => {
      while (!settled && running < jobs && launched < n) {
        const index = launched++;
        const p = pending[index];
        const w = start(task(index, opts, 'whole', 0));
        p.worker = w;
        running++;
        let finished = false;
        w.on('message', (m: WorkerMessage) => {
          if (m.type === 'findings' && index !== current) {
            // Not this input's turn yet: its findings wait on disk, in order, before anything queued after them.
            const held = (p.held ??= new HeldFindings());
            for (const f of m.findings) held.add(f);
            p.queue.push({ ...m, findings: [] });
          } else if (m.type === 'findings' || m.type === 'bound' || m.type === 'done' || m.type === 'error') p.queue.push(m);
          // Findings wait in memory only while an earlier input is still running.
          if (m.type === 'findings') w.postMessage({ type: 'ack' });
          if (m.type === 'done' || m.type === 'error') {
            finished = true;
            running--;
            launch();
          }
          // A report that cannot be written surfaces here: it ends the run like any other error.
          try {
            if (index === current || m.type === 'done' || m.type === 'error') drain();
          } catch (e) {
            fail(e);
          }
        });
        w.on('error', fail);
        w.on('exit', (code) => {
          if (!finished) fail(new Error(`a worker thread stopped early (exit code ${code})`));
        });
      }
    };
    launch();
  });
}


/** What the ranges of one file add up to, once each has ended. */
export interface RangeEnd {
  stats: ReaderStats;
  notes: string[];
  counts: RangeCounts;
  state: InputRunState;
}

/**
 * The reader facts of the ranges joined into those of one read: counts added, each distinct
 * note once (every range reads the header, so its notes come from each), and the blank lines
 * inside the data as the one note a whole read gives.
 */
export function joinedReads(ends: readonly Pick<RangeEnd, 'stats' | 'counts' | 'notes'>[]): { stats: ReaderStats; notes: string[] } {
  const stats: ReaderStats = { records: 0, rows: 0, unparseable: 0 };
  const notes: string[] = [];
  let blank = 0;
  let firstBlank = 0;
  ends.forEach((e) => {
    stats.records += e.stats.records;
    stats.rows += e.stats.rows;
    stats.unparseable += e.stats.unparseable;
    for (const n of e.notes) if (!notes.includes(n)) notes.push(n);
    if (e.counts.blanks.count > 0) {
      if (blank === 0) firstBlank = e.counts.blanks.firstLine;
      blank += e.counts.blanks.count;
    }
  });
  if (blank > 0) notes.push(blankLinesNote(blank, firstBlank));
  return { stats, notes };
}

/**
 * One CSV file in byte ranges, a worker per range with every rule. The first range's findings are
 * handed on as they come; a later range's wait in temporary files until it and the ranges before it
 * have ended. One run here absorbs the ranges' rule states in order, each range's findings pass
 * through the rules' filters once its state is in (a rule with a cap may drop some), and the run
 * finishes the input, so the findings and the accounting are those of one pass.
 */
export function runRanges(pos: number, opts: RunInputsOptions, layout: CsvLayout, ranges: readonly ByteRange[], binding: Binding, sample?: Batch): Promise<InputResult> {
  const path = opts.paths[pos];
  const index = inputNumber(opts, pos);
  const tally = new RowTally(opts.sink);
  const final = new InputRun(opts.rules, opts.selection, boundMap(binding), tally, undefined, undefined, FILE_SPILL, sample);
  const n = ranges.length;
  const workers: Worker[] = [];
  const held: (HeldFindings | null)[] = new Array(n).fill(null);
  const ends: (RangeEnd | null)[] = new Array(n).fill(null);
  const shifts: RowShift[] = [{ rows: 0, lines: 0 }];
  let current = 0;
  let rows = 0;
  return new Promise<InputResult>((resolve, reject) => {
    let settled = false;
    const fail = (e: unknown) => {
      if (settled) return;
      settled = true;
      for (const w of workers) void w.terminate();
      // The spill files of ranges that ended but were not absorbed belong to nobody now.
      for (let k = current; k < n; k++) if (ends[k]) for (const h of spillHandlesIn(ends[k]!.state)) discardHandle(h);
      reject(e);
    };
    /** Moves on past every range that has ended, handing on the next one's held findings. */
    const advance = () => {
      while (current < n && ends[current]) {
        const e = ends[current]!;
        const shift = shifts[current];
        final.absorbState(e.state, shift);
        if (current > 0) {
          // A later range's findings go through the rules' filters once its state is absorbed.
          const admit = final.admitting(tally);
          held[current]?.flush({ push: (f) => admit.push(shiftFinding(f, shift)) });
          admit.end();
          held[current] = null;
        }
        // Range readers number lines as in the file already; only rows move.
        shifts[current + 1] = { rows: shift.rows + e.stats.rows, lines: 0 };
        current++;
      }
      if (current < n || settled) return;
      settled = true;
      const reports = final.finish();
      const { stats, notes } = joinedReads(ends as RangeEnd[]);
      resolve({ binding, rules: reports, summary: inputSummary(index, path, layout.delimiter === '\t' ? 'tsv' : 'csv', stats, notes, binding, tally.rows.size) });
    };
    ranges.forEach((bytes, k) => {
      const w = start(task(pos, opts, 'range', 0, { layout, bytes, binding, sample }));
      workers.push(w);
      let finished = false;
      w.on('message', (m: WorkerMessage) => {
        try {
          if (m.type === 'findings') {
            w.postMessage({ type: 'ack' });
            // The first range's findings are final as they come; a later range's wait for its turn.
            if (k === 0) for (const f of m.findings) tally.push(f);
            else for (const f of m.findings) (held[k] ??= new HeldFindings()).add(f);
            rows += m.rows;
            opts.progress?.(path, rows, null);
          } else if (m.type === 'range-done') {
            finished = true;
            ends[k] = { stats: m.stats, notes: m.notes, counts: m.counts, state: m.state };
            advance();
          } else if (m.type === 'error') {
            finished = true;
            fail(rebuilt(m));
          }
        } catch (e) {
          fail(e);
        }
      });
      w.on('error', fail);
      w.on('exit', (code) => {
        if (!finished) fail(new Error(`a worker thread stopped early (exit code ${code})`));
      });
    });
  });
}
