/**
 * Shared arithmetic of the consistency rules (Stefan-Boltzmann, surface gravity, bolometric
 * magnitude, parallax): uncertainties carried into log space, a bounded tally of residuals that
 * tells a whole-column zero-point offset from scatter, and a capped buffer for the few rows whose
 * verdict can only be given once the whole column has been seen. Pure: no I/O, no rule names.
 */
import { columnFinding } from '../engine/findings.js';
import type { Finding, FindingSink, RowShift } from '../engine/types.js';
import { HeldQueue, type HeldQueueState } from '../engine/held.js';
import type { SpillStore } from '../engine/spill.js';

/** A finite, non-negative uncertainty from an optional error array, else 0 (no error stated). */
export function errAt(errs: Float64Array | null | undefined, i: number): number {
  if (!errs) return 0;
  const e = errs[i];
  return e >= 0 ? e : 0;
}

/** The upper uncertainty of a positive linear value, in dex: log10(v + e) - log10(v). */
export function dexAbove(v: number, e: number): number {
  return e > 0 ? Math.log10(1 + e / v) : 0;
}

/**
 * The lower uncertainty of a positive linear value, in dex: log10(v) - log10(v - e). An error that
 * reaches zero leaves the value unbounded below in log space (Infinity): such a row cannot
 * contradict anything on that side.
 */
export function dexBelow(v: number, e: number): number {
  if (!(e > 0)) return 0;
  return e < v ? -Math.log10(1 - e / v) : Infinity;
}

/**
 * Where a row stands for a rule that may correct its relation by a column offset of at most
 * `maxOffset` (in the residual's unit), known only once the column is complete:
 * 0 = passes whatever the offset, 1 = fails whatever the offset, 2 = depends on the offset.
 */
export function offsetBand(residual: number, allowed: number, maxOffset: number): 0 | 1 | 2 {
  const a = Math.abs(residual);
  if (a + maxOffset <= allowed) return 0;
  if (a - maxOffset > allowed) return 1;
  return 2;
}

/**
 * Residuals of a column in a fixed histogram (bounded memory whatever the row count), for the
 * median and quartiles. Each bin also sums its values, so a quantile is the mean of the values in
 * its bin: exact when the column sits on one constant offset. Values outside +-halfRange are
 * counted below or above the range.
 */
export class ResidualTally {
  private readonly bins: Int32Array;
  private readonly sums: Float64Array;
  private below = 0;
  private above = 0;
  n = 0;

  constructor(
    private readonly halfRange: number,
    private readonly binWidth: number,
  ) {
    this.bins = new Int32Array(Math.ceil((2 * halfRange) / binWidth));
    this.sums = new Float64Array(this.bins.length);
  }

  add(x: number): void {
    if (!Number.isFinite(x)) return;
    this.n++;
    if (x < -this.halfRange) this.below++;
    else if (x >= this.halfRange) this.above++;
    else {
      const b = Math.min(this.bins.length - 1, Math.floor((x + this.halfRange) / this.binWidth));
      this.bins[b]++;
      this.sums[b] += x;
    }
  }

  /** The p-quantile (0..1) to within one bin width; -Infinity or Infinity when it falls outside the range. */
  quantile(p: number): number {
    if (this.n === 0) return NaN;
    const target = Math.min(this.n - 1, Math.max(0, Math.floor(p * (this.n - 1))));
    let seen = this.below;
    if (target < seen) return -Infinity;
    for (let b = 0; b < this.bins.length; b++) {
      seen += this.bins[b];
      if (target < seen) return this.sums[b] / this.bins[b];
    }
    return Infinity;
  }

  /**
   * The column's constant offset, or NaN when there is none: at least `minRows` residuals, a
   * median between `minAbs` and `maxAbs` in size, and three quarters of the rows on the median's
   * side of zero (the lower quartile above zero for a positive offset), so scatter around zero
   * with a slightly shifted median is not mistaken for a convention.
   */
  constantOffset(minAbs: number, maxAbs: number, minRows: number): number {
    if (this.n < minRows) return NaN;
    const m = this.quantile(0.5);
    if (!(Math.abs(m) >= minAbs && Math.abs(m) <= maxAbs)) return NaN;
    const sameSide = m > 0 ? this.quantile(0.25) > 0 : this.quantile(0.75) < 0;
    return sameSide ? m : NaN;
  }

  /** The tally as data, only the occupied bins: a column near one offset fills a handful of 10 000. */
  save(): TallyState {
    let used = 0;
    for (let b = 0; b < this.bins.length; b++) if (this.bins[b] !== 0) used++;
    const index = new Int32Array(used);
    const counts = new Int32Array(used);
    const sums = new Float64Array(used);
    for (let b = 0, j = 0; b < this.bins.length; b++) {
      if (this.bins[b] === 0) continue;
      index[j] = b;
      counts[j] = this.bins[b];
      sums[j++] = this.sums[b];
    }
    return { index, counts, sums, below: this.below, above: this.above, n: this.n };
  }

  /**
   * Adds a saved tally of the same shape. Counts add exactly; a bin's sum may differ from one
   * pass's in its last bits (addition order), far below the round6 of anything reported.
   */
  absorb(s: TallyState): void {
    for (let j = 0; j < s.index.length; j++) {
      const b = s.index[j];
      this.bins[b] += s.counts[j];
      this.sums[b] += s.sums[j];
    }
    this.below += s.below;
    this.above += s.above;
    this.n += s.n;
  }
}

/** A ResidualTally as plain data (see ResidualTally.save). */
export interface TallyState {
  index: Int32Array;
  counts: Int32Array;
  sums: Float64Array;
  below: number;
  above: number;
  n: number;
}

/** A held finding's verdict as a closure over its row's numbers (tests, runs that are never split). */
export type LaterFinding = (offset: number) => Finding | null;

/**
 * How a rule turns what it held for a row into the finding, once the column offset is known, and
 * how that data is renumbered when it was held in a later row range. The data is plain (numbers,
 * strings, a Finding), so a range's state can be saved; the functions stay with the rule.
 */
export interface HeldKind<T> {
  build(data: T, offset: number): Finding | null;
  /** The data with its row and line numbers shifted (a copy: the saved state is left as it was). */
  move(data: T, shift: RowShift): T;
}

/** A row finding renumbered for the whole input, as a copy. */
export function movedFinding(f: Finding, shift: RowShift): Finding {
  return { ...f, row: f.row === null ? null : f.row + shift.rows, line: f.line === null ? null : f.line + shift.lines };
}

/** Held findings that are already complete: held only in case a column verdict folds them. */
export const FINISHED: HeldKind<Finding> = { build: (f) => f, move: movedFinding };

const CLOSURES: HeldKind<LaterFinding> = {
  build: (later, offset) => later(offset),
  move: () => {
    throw new Error('a held closure cannot be saved for another row range; hold data with a HeldKind');
  },
};

/** Default cap on findings held back until the end of an input. */
export const DEFERRED_CAP = 20_000;

/** DeferredFindings as plain data (see DeferredFindings.save). */
export interface DeferredState {
  items: HeldQueueState;
  pushed: Map<number, number>;
  dropped: number;
}

/**
 * Findings that can only be finished once the whole column is known (they depend on its offset,
 * or may be folded into one column finding). Each entry is the data of one row, never the batch,
 * turned into a finding by `kind` at the end; at most `cap` are held (the first in row order), the
 * rest are counted. A closure can be held only in memory, for a run that is never split; data is
 * held in the spill store given (see HeldQueue), so memory does not grow with the rows.
 */
export class DeferredFindings<T = LaterFinding> {
  private readonly items: HeldQueue<T> | null;
  private closures: { tag: number; data: T }[] = [];
  /** Entries pushed per tag, including those beyond the cap. */
  readonly pushed = new Map<number, number>();
  dropped = 0;

  constructor(
    private readonly cap = DEFERRED_CAP,
    private readonly kind: HeldKind<T> = CLOSURES as unknown as HeldKind<T>,
    spill?: SpillStore,
  ) {
    this.items = kind === (CLOSURES as unknown as HeldKind<T>) ? null : new HeldQueue<T>(cap, spill);
  }

  push(tag: number, data: T): void {
    this.pushed.set(tag, (this.pushed.get(tag) ?? 0) + 1);
    const held = this.items ? this.items.push(data, tag) : this.closures.length < this.cap && this.closures.push({ tag, data }) > 0;
    if (!held) this.dropped++;
  }

  count(tag: number): number {
    return this.pushed.get(tag) ?? 0;
  }

  /** Builds the held findings against `offset` and pushes those that still stand; returns how many. */
  flush(out: FindingSink, offset: number, skipTag = -1): number {
    let n = 0;
    const one = (data: T, tag: number, shift: RowShift) => {
      if (tag === skipTag) return;
      const f = this.kind.build(shift.rows !== 0 || shift.lines !== 0 ? this.kind.move(data, shift) : data, offset);
      if (f) {
        out.push(f);
        n++;
      }
    };
    if (this.items) this.items.drain(one);
    else for (const it of this.closures) one(it.data, it.tag, NO_SHIFT);
    this.closures = [];
    return n;
  }

  save(): DeferredState {
    if (!this.items) throw new Error('a held closure cannot be saved for another row range; hold data with a HeldKind');
    return { items: this.items.save(), pushed: new Map(this.pushed), dropped: this.dropped };
  }

  /**
   * Takes in the entries held over the rows that follow: they fill the cap after this buffer's
   * own, so the buffer holds the first `cap` entries of the whole input as one pass would.
   */
  absorb(s: DeferredState, shift: RowShift): void {
    for (const [tag, n] of s.pushed) this.pushed.set(tag, (this.pushed.get(tag) ?? 0) + n);
    this.dropped += this.items!.absorb(s.items, shift) + s.dropped;
  }
}

const NO_SHIFT: RowShift = { rows: 0, lines: 0 };

/**
 * Row verdicts against a relation that may be shifted by a whole-column zero-point offset, known
 * only at the end of the input. Rows that pass or fail whatever the offset are settled as they
 * stream by; the few in between are held (capped) and judged once the offset is measured.
 */
export class OffsetJudge<T> {
  readonly tally: ResidualTally;
  readonly held: DeferredFindings<T>;
  /** The column offset found by `settle`, NaN when there is none. */
  offset = NaN;

  constructor(
    halfRange: number,
    binWidth: number,
    private readonly minOffset: number,
    private readonly maxOffset: number,
    private readonly minRows: number,
    private readonly kind: HeldKind<T>,
    spill?: SpillStore,
  ) {
    this.tally = new ResidualTally(halfRange, binWidth);
    this.held = new DeferredFindings(DEFERRED_CAP, kind, spill);
  }

  /** Counts the residual; true when the row needs a finding built (it fails for some allowed offset). */
  consider(residual: number, allowed: number): boolean {
    this.tally.add(residual);
    return offsetBand(residual, allowed, this.maxOffset) !== 0;
  }

  /** Pushes the finding now when the row fails whatever the offset, else holds it for `settle`. */
  route(residual: number, allowed: number, out: FindingSink, data: T): void {
    if (offsetBand(residual, allowed, this.maxOffset) === 1) {
      const f = this.kind.build(data, 0);
      if (f) out.push(f);
    } else this.held.push(0, data);
  }

  /** Measures the column offset, judges the held rows against it, and returns it (0 when none). */
  settle(out: FindingSink): number {
    this.offset = this.tally.constantOffset(this.minOffset, this.maxOffset, this.minRows);
    const off = Number.isFinite(this.offset) ? this.offset : 0;
    this.held.flush(out, off);
    return off;
  }

  /** The tally and the held rows of a row range, as data; the offset is only measured at the end. */
  save(): OffsetJudgeState {
    return { tally: this.tally.save(), held: this.held.save() };
  }

  absorb(s: OffsetJudgeState, shift: RowShift): void {
    this.tally.absorb(s.tally);
    this.held.absorb(s.held, shift);
  }
}

export interface OffsetJudgeState {
  tally: TallyState;
  held: DeferredState;
}

/** The column note for rows a full buffer could not list, or null when none were left out. */
export function overflowNote(input: number, rule: string, columns: string[], dropped: number, what: string): Finding | null {
  if (dropped <= 0) return null;
  return columnFinding({
    input,
    rule,
    severity: 'note',
    columns,
    values: { rowsNotListed: dropped },
    message: `${dropped} more rows ${what} and are not listed (buffer full)`,
  });
}
