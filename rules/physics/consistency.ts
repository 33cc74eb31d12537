/**
 * Shared arithmetic of the consistency rules (Stefan-Boltzmann, surface gravity, bolometric
 * magnitude, parallax): uncertainties carried into log space, a bounded tally of residuals that
 * tells a whole-column zero-point offset from scatter, and a capped buffer for the few rows whose
 * verdict can only be given once the whole column has been seen. Pure: no I/O, no rule names.
 */
import { columnFinding } from '../engine/findings.js';
import type { Finding, FindingSink } from '../engine/types.js';

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
}

/**
 * A finding already built, held as a DeferredFindings entry. Made here, outside any rule's check(),
 * on purpose: a closure written inside check() shares that call's scope with every other closure
 * there and can keep the whole batch's arrays alive for as long as it is held.
 */
export function heldFinding(f: Finding): (offset: number) => Finding {
  return () => f;
}

/** Default cap on findings held back until the end of an input. */
export const DEFERRED_CAP = 20_000;

/**
 * Findings that can only be finished once the whole column is known (they depend on its offset,
 * or may be folded into one column finding). Each entry is a small closure over the numbers of
 * one row, never the batch; at most `cap` are held, the rest are counted.
 */
export class DeferredFindings {
  private readonly items: { tag: number; build: (offset: number) => Finding | null }[] = [];
  /** Entries pushed per tag, including those beyond the cap. */
  readonly pushed = new Map<number, number>();
  dropped = 0;

  constructor(private readonly cap = DEFERRED_CAP) {}

  push(tag: number, build: (offset: number) => Finding | null): void {
    this.pushed.set(tag, (this.pushed.get(tag) ?? 0) + 1);
    if (this.items.length >= this.cap) {
      this.dropped++;
      return;
    }
    this.items.push({ tag, build });
  }

  count(tag: number): number {
    return this.pushed.get(tag) ?? 0;
  }

  /** Builds the held findings against `offset` and pushes those that still stand; returns how many. */
  flush(out: FindingSink, offset: number, skipTag = -1): number {
    let n = 0;
    for (const it of this.items) {
      if (it.tag === skipTag) continue;
      const f = it.build(offset);
      if (f) {
        out.push(f);
        n++;
      }
    }
    this.items.length = 0;
    return n;
  }
}

/**
 * Row verdicts against a relation that may be shifted by a whole-column zero-point offset, known
 * only at the end of the input. Rows that pass or fail whatever the offset are settled as they
 * stream by; the few in between are held (capped) and judged once the offset is measured.
 */
export class OffsetJudge {
  readonly tally: ResidualTally;
  readonly held = new DeferredFindings();
  /** The column offset found by `settle`, NaN when there is none. */
  offset = NaN;

  constructor(
    halfRange: number,
    binWidth: number,
    private readonly minOffset: number,
    private readonly maxOffset: number,
    private readonly minRows: number,
  ) {
    this.tally = new ResidualTally(halfRange, binWidth);
  }

  /** Counts the residual; true when the row needs a finding built (it fails for some allowed offset). */
  consider(residual: number, allowed: number): boolean {
    this.tally.add(residual);
    return offsetBand(residual, allowed, this.maxOffset) !== 0;
  }

  /** Pushes the finding now when the row fails whatever the offset, else holds it for `settle`. */
  route(residual: number, allowed: number, out: FindingSink, build: (offset: number) => Finding | null): void {
    if (offsetBand(residual, allowed, this.maxOffset) === 1) {
      const f = build(0);
      if (f) out.push(f);
    } else this.held.push(0, build);
  }

  /** Measures the column offset, judges the held rows against it, and returns it (0 when none). */
  settle(out: FindingSink): number {
    this.offset = this.tally.constantOffset(this.minOffset, this.maxOffset, this.minRows);
    const off = Number.isFinite(this.offset) ? this.offset : 0;
    this.held.flush(out, off);
    return off;
  }
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
