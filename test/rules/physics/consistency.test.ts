import { describe, expect, it } from 'vitest';
import type { Finding } from '../../../rules/engine/types.js';
import { DeferredFindings, ResidualTally, dexAbove, dexBelow, errAt, offsetBand } from '../../../rules/physics/consistency.js';

describe('uncertainties in log space', () => {
  it('turns linear errors into dex on each side', () => {
    // 10 +- 1: log10(11/10) above, log10(10/9) below (common practice: exact, not the linear 0.434 e/v).
    expect(dexAbove(10, 1)).toBeCloseTo(Math.log10(1.1), 12);
    expect(dexBelow(10, 1)).toBeCloseTo(Math.log10(10 / 9), 12);
    expect(dexAbove(10, 0)).toBe(0);
    // An error reaching the value leaves log space unbounded below.
    expect(dexBelow(5.15, 5.15)).toBe(Infinity);
  });

  it('reads a missing or negative error as none', () => {
    const e = Float64Array.from([0.1, NaN, -1, Infinity]);
    expect([0, 1, 2, 3].map((i) => errAt(e, i))).toEqual([0.1, 0, 0, Infinity]);
    expect(errAt(null, 0)).toBe(0);
  });

  it('tells rows that pass or fail whatever the offset from those that depend on it', () => {
    expect(offsetBand(0.1, 0.3, 0.05)).toBe(0);
    expect(offsetBand(-0.4, 0.3, 0.05)).toBe(1);
    expect(offsetBand(0.28, 0.3, 0.05)).toBe(2);
    expect(offsetBand(0.33, 0.3, 0.05)).toBe(2);
  });
});

describe('ResidualTally', () => {
  it('finds the median of a constant offset exactly and calls it a column offset', () => {
    const t = new ResidualTally(0.5, 1e-4);
    for (let i = 0; i < 640; i++) t.add(0.0213);
    expect(t.quantile(0.5)).toBeCloseTo(0.0213, 12);
    expect(t.constantOffset(0.005, 0.05, 10)).toBeCloseTo(0.0213, 12);
  });

  it('does not call scatter around zero an offset, nor a shift beyond the allowed size', () => {
    const t = new ResidualTally(0.5, 1e-4);
    for (let i = 0; i < 1000; i++) t.add(0.01 + 0.2 * Math.sin(i));
    expect(t.constantOffset(0.005, 0.05, 10)).toBeNaN();
    const big = new ResidualTally(0.5, 1e-4);
    for (let i = 0; i < 100; i++) big.add(0.2);
    expect(big.constantOffset(0.005, 0.05, 10)).toBeNaN();
    const few = new ResidualTally(0.5, 1e-4);
    for (let i = 0; i < 5; i++) few.add(0.02);
    expect(few.constantOffset(0.005, 0.05, 10)).toBeNaN();
  });

  it('counts values outside its range in the quantiles', () => {
    const t = new ResidualTally(0.5, 1e-4);
    for (let i = 0; i < 3; i++) t.add(5);
    t.add(0);
    expect(t.n).toBe(4);
    expect(t.quantile(0.5)).toBe(Infinity);
    expect(t.quantile(0)).toBeCloseTo(0, 12);
  });
});

describe('DeferredFindings', () => {
  const f = (row: number): Finding => ({
    rule: 'x', severity: 'warning', input: 0, scope: 'row', row, line: null, id: null, columns: [], values: {}, expected: null, message: '', suggestion: null, cause: null, related: [],
  });

  it('holds at most its cap, counts per tag and builds against the final offset', () => {
    const d = new DeferredFindings(2);
    d.push(0, (off) => (off > 0 ? null : f(1)));
    d.push(1, () => f(2));
    d.push(1, () => f(3));
    expect(d.count(1)).toBe(2);
    expect(d.dropped).toBe(1);
    const out: Finding[] = [];
    expect(d.flush({ push: (x) => out.push(x) }, 0.1)).toBe(1);
    expect(out.map((x) => x.row)).toEqual([2]);
  });

  it('leaves out a tag folded into a column finding', () => {
    const d = new DeferredFindings();
    d.push(0, () => f(1));
    d.push(1, () => f(2));
    const out: Finding[] = [];
    d.flush({ push: (x) => out.push(x) }, 0, 1);
    expect(out.map((x) => x.row)).toEqual([1]);
  });
});
