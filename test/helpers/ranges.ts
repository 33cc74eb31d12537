/**
 * An input checked in row ranges, in this process: the batches of one whole read are cut at given
 * rows, each range is renumbered from row 1 and line 1 as a range reader would give it, checked by
 * a run of its own, and its saved state passed through the v8 serializer (what a thread's message
 * and a shard's state file do to it) before a fresh run absorbs every range in order and finishes.
 */
import { deserialize, serialize } from 'node:v8';
import { InputRun, selectRules, shiftFinding, type RuleReport, type RuleSelection } from '../../rules/engine/runner.js';
import type { Quantity } from '../../rules/engine/quantities.js';
import type { Batch, Finding, QuantityColumn, Rule, RowShift } from '../../rules/engine/types.js';
import { MemorySpill } from '../../rules/engine/spill.js';

type Bound = ReadonlyMap<Quantity, { column: string; unit: string }>;

const cut = <T extends Float64Array | null | undefined>(a: T, from: number, to: number): T => (a ? (a.slice(from, to) as T) : a);

/** Rows [from, to) of a batch (indices within it), as a batch of their own. */
export function sliceBatch(b: Batch, from: number, to: number): Batch {
  const quantities: Batch['quantities'] = {};
  for (const [q, c] of Object.entries(b.quantities) as [keyof Batch['quantities'], QuantityColumn][]) {
    quantities[q] = {
      ...c,
      value: c.value.slice(from, to),
      raw: c.raw.slice(from, to),
      errLo: cut(c.errLo, from, to),
      errHi: cut(c.errHi, from, to),
      ...(c.log ? { log: c.log.slice(from, to) } : {}),
      ...(c.logErrLo !== undefined ? { logErrLo: cut(c.logErrLo, from, to) } : {}),
      ...(c.logErrHi !== undefined ? { logErrHi: cut(c.logErrHi, from, to) } : {}),
      ...(c.errRaw
        ? {
            errRaw: (() => {
              const lo = cut(c.errRaw.lo, from, to);
              return { ...c.errRaw, lo, hi: c.errRaw.hi === c.errRaw.lo ? lo : cut(c.errRaw.hi, from, to) };
            })(),
          }
        : {}),
    };
  }
  const text: Batch['text'] = {};
  for (const [q, c] of Object.entries(b.text) as [keyof Batch['text'], { column: string; values: (string | null)[] }][]) {
    text[q] = { column: c.column, values: c.values.slice(from, to) };
  }
  // Marks are what rules add while checking; a slice starts without them, as a batch fresh from the binder.
  const unusable: Batch['unusable'] = {};
  return {
    input: b.input,
    length: to - from,
    firstRow: b.firstRow + from,
    lines: b.lines ? b.lines.slice(from, to) : null,
    quantities,
    text,
    // Row-less records (index -1) stay with the batch that starts at its beginning.
    problems: b.problems.filter((p) => (p.index < 0 ? from === 0 : p.index >= from && p.index < to)).map((p) => (p.index < 0 ? p : { ...p, index: p.index - from })),
    unusable,
    ...(b.facts ? { facts: b.facts } : {}),
  };
}

/** The batch renumbered as the first rows of a range that starts after `shift`. */
function rebased(b: Batch, shift: RowShift): Batch {
  return {
    ...b,
    firstRow: b.firstRow - shift.rows,
    lines: b.lines ? b.lines.map((l) => l - shift.lines) : null,
    problems: b.problems.map((p) => (p.line == null ? p : { ...p, line: p.line - shift.lines })),
  };
}

export function boundOf(batches: readonly Batch[]): Map<Quantity, { column: string; unit: string }> {
  const bound = new Map<Quantity, { column: string; unit: string }>();
  for (const b of batches) {
    for (const [q, c] of Object.entries(b.quantities)) bound.set(q as Quantity, { column: c!.column, unit: c!.unit });
    for (const [q, c] of Object.entries(b.text)) bound.set(q as Quantity, { column: c!.column, unit: '' });
  }
  return bound;
}

export interface RunResult {
  findings: Finding[];
  reports: RuleReport[];
}

/**
 * One run over every batch, as the command line's single thread does it. The batches are copied
 * first: screening rules mark cells on the batch they check, and the marks must not reach a later run.
 */
export function runWhole(rules: readonly Rule[], batches: readonly Batch[], bound: Bound, selection: RuleSelection = {}, sample?: Batch): RunResult {
  const findings: Finding[] = [];
  const run = new InputRun(selectRules(rules, selection), selection, bound, { push: (f) => findings.push(f) }, undefined, undefined, new MemorySpill(), sample);
  for (const b of batches) run.processBatch(sliceBatch(b, 0, b.length));
  return { findings, reports: run.finish() };
}

/**
 * The same batches checked in ranges that start at the given 1-based rows (ascending, each past
 * the first row). Returns null when the selected rules cannot be split (InputRun.splittable).
 */
export function runInRanges(
  rules: readonly Rule[],
  batches: readonly Batch[],
  bound: Bound,
  starts: readonly number[],
  selection: RuleSelection = {},
  sample?: Batch,
): RunResult | null {
  const chosen = selectRules(rules, selection);
  const firstRow = batches[0]?.firstRow ?? 1;
  const bounds = [firstRow, ...starts, Infinity];
  const findings: Finding[] = [];
  const states: { state: ReturnType<InputRun['saveState']>; shift: RowShift; own: Finding[] }[] = [];
  for (let r = 0; r + 1 < bounds.length; r++) {
    const lo = bounds[r];
    const hi = bounds[r + 1];
    const part: Batch[] = [];
    for (const b of batches) {
      const from = Math.max(0, lo - b.firstRow);
      const to = Math.min(b.length, hi - b.firstRow);
      if (to > from) part.push(sliceBatch(b, from, to));
    }
    // The shift: rows before the range, and the physical line just before its first row.
    const firstLine = part[0]?.lines?.[0];
    const shift: RowShift = { rows: lo - firstRow, lines: r === 0 || firstLine === undefined ? 0 : firstLine - 1 };
    const own: Finding[] = [];
    const run = new InputRun(chosen, selection, bound, { push: (f) => own.push(f) }, undefined, undefined, new MemorySpill(), sample);
    if (!run.splittable()) return null;
    for (const b of part) run.processBatch(r === 0 ? b : rebased(b, shift));
    states.push({ state: deserialize(serialize(run.saveState())) as ReturnType<InputRun['saveState']>, shift, own: deserialize(serialize(own)) as Finding[] });
  }
  // As the threads and merge do it: absorb a range, then hand on its findings through the filters.
  const sink = { push: (f: Finding) => findings.push(f) };
  const final = new InputRun(chosen, selection, bound, sink, undefined, undefined, new MemorySpill());
  for (const { state, shift, own } of states) {
    final.absorbState(state, shift);
    const admit = final.admitting(sink);
    for (const f of own) admit.push(shiftFinding(f, shift));
    admit.end();
  }
  return { findings, reports: final.finish() };
}
