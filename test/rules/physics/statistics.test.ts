import { describe, expect, it } from 'vitest';
import {
  FixedHistogram,
  autoThreshold,
  expectedExceedances,
  log10GaussianRatio,
  normalUpperQuantile,
  normalUpperTail,
  poissonUpperTail,
} from '../../../rules/physics/statistics.js';

describe('Gaussian tails', () => {
  it('Q(z) matches the tabulated normal tail (common practice: erfc(z / sqrt 2) / 2)', () => {
    expect(2 * normalUpperTail(3)).toBeCloseTo(0.0026998, 6);
    expect(normalUpperTail(1.959964)).toBeCloseTo(0.025, 6);
    expect(normalUpperTail(0)).toBeCloseTo(0.5, 7);
  });

  it('the quantile inverts the tail', () => {
    for (const p of [0.4, 0.05, 1e-3, 2.5e-5, 1e-9]) expect(normalUpperTail(normalUpperQuantile(p)) / p).toBeCloseTo(1, 5);
    expect(normalUpperQuantile(0.025)).toBeCloseTo(1.959964, 4);
  });
});

describe('thresholds that respect the number of stars', () => {
  it('auto threshold: (2 N_two-sided + N_one-sided) Q(k) = 0.5', () => {
    for (const [two, one] of [
      [10_000, 0],
      [1e7, 0],
      [3000, 5000],
      [0, 200],
    ]) {
      const k = autoThreshold(two, one, 0.5, 0);
      expect(expectedExceedances(k, two, one)).toBeCloseTo(0.5, 4);
    }
    // A 3-sigma cut over 10 million stars flags about 27 000 by chance (the example): 1e7 x 0.0027.
    expect(expectedExceedances(3, 1e7, 0)).toBeCloseTo(26_998, -1);
  });

  it('never goes below its floor, and with no stars is the floor', () => {
    // 50 stars two-sided: k = Q^-1(0.005) = 2.576 (common practice), below a floor of 3.
    expect(autoThreshold(50, 0, 0.5, 0)).toBeCloseTo(2.5758, 3);
    expect(autoThreshold(50, 0, 0.5, 3)).toBe(3);
    expect(autoThreshold(0, 0, 0.5, 3)).toBe(3);
  });

  it('Poisson tail: P(X >= k) against direct sums', () => {
    expect(poissonUpperTail(0, 3)).toBe(1);
    expect(poissonUpperTail(1, 0.5)).toBeCloseTo(1 - Math.exp(-0.5), 10);
    // P(X >= 3 | 2) = 1 - e^-2 (1 + 2 + 2) = 0.3233236.
    expect(poissonUpperTail(3, 2)).toBeCloseTo(1 - 5 * Math.exp(-2), 9);
    // Far in the tail it neither overflows nor underflows to nonsense.
    const p = poissonUpperTail(200, 5);
    expect(p).toBeGreaterThan(0);
    expect(p).toBeLessThan(1e-200);
  });
});

describe('bounded-memory sketches and likelihood ratios', () => {
  it('a fixed histogram gives the median and MAD to a cell', () => {
    const h = new FixedHistogram(-5, 5, 0.01);
    // A grid of a standard normal's quantiles: median 0, MAD 0.6745 (1 / 1.4826).
    for (let k = 1; k < 2000; k++) h.add(normalUpperQuantile(k / 2000));
    expect(h.quantile(0.5)).toBeCloseTo(0, 2);
    expect(h.mad(0)).toBeCloseTo(0.6745, 1);
  });

  it('the Gaussian likelihood ratio of two readings, worked by hand', () => {
    // One expectation at 0 with sigma 0.1: reading A at 0, B at 0.3 (3 sigma): (0.09 - 0) / (2 x 0.01)
    // = 4.5 nats = 4.5 / ln 10 = 1.9543 dex, i.e. A is e^4.5 = 90 times more probable.
    expect(log10GaussianRatio(0, 0.3, [0], [0.1], 1)).toBeCloseTo(1.95434, 4);
    // Two independent expectations that agree double the evidence.
    expect(log10GaussianRatio(0, 0.3, [0, 0], [0.1, 0.1], 2)).toBeCloseTo(2 * 1.95434, 4);
    // Symmetric: B against A is the negative.
    expect(log10GaussianRatio(0.3, 0, [0], [0.1], 1)).toBeCloseTo(-1.95434, 4);
  });
});
