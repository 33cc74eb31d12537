/**
 * Gaussian and Poisson tails, the threshold that keeps chance exceedances below a target for a
 * known number of trials, a fixed-size histogram for medians and MADs in bounded memory, and the
 * Gaussian likelihood ratio of two readings of one value.
 */

/**
 * Upper tail of the standard normal, Q(z) = P(Z > z) = erfc(z / sqrt 2) / 2, via the
 * complementary error function approximation of Numerical Recipes (Press et al. 2007, erfcc,
 * fractional error below 1.2e-7).
 */
export function normalUpperTail(z: number): number {
  const x = z / Math.SQRT2;
  const t = 1 / (1 + 0.5 * Math.abs(x));
  const y =
    t *
    Math.exp(
      -x * x -
        1.26551223 +
        t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806 + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))),
    );
  const erfc = x >= 0 ? y : 2 - y;
  return erfc / 2;
}

/**
 * The z with Q(z) = p (0 < p < 1), by bisection on normalUpperTail: 200 halvings of [-40, 40]
 * pin it far below the 1e-7 accuracy of Q itself. Not on any hot path (once per input).
 */
export function normalUpperQuantile(p: number): number {
  if (!(p > 0 && p < 1)) return p <= 0 ? Infinity : -Infinity;
  let lo = -40;
  let hi = 40;
  for (let k = 0; k < 200 && hi - lo > 1e-12; k++) {
    const mid = (lo + hi) / 2;
    if (normalUpperTail(mid) > p) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}

/**
 * Expected number of chance exceedances of |z| > k (two-sided trials) or z beyond k on one named
 * side (one-sided trials) for Gaussian residuals: E = (2 n2 + n1) Q(k).
 */
export function expectedExceedances(k: number, twoSided: number, oneSided: number): number {
  return (2 * twoSided + oneSided) * normalUpperTail(k);
}

/**
 * The threshold `k` at which the expected number of chance exceedances over the trials is
 * `target`: (2 n2 + n1) Q(k) = target, so k = Q^-1(target / (2 n2 + n1)); never below `floor`.
 * With no trials the floor is returned.
 */
export function autoThreshold(twoSided: number, oneSided: number, target = 0.5, floor = 0): number {
  const n = 2 * twoSided + oneSided;
  if (!(n > 0)) return floor;
  const p = target / n;
  const k = p >= 1 ? -Infinity : normalUpperQuantile(p);
  return Math.max(floor, k);
}

/**
 * P(X >= k) for X ~ Poisson(lambda): how surprising it is to see k or more exceedances where
 * chance predicts lambda. Summed in log space from the mode side, so large k and lambda do not
 * overflow.
 */
export function poissonUpperTail(k: number, lambda: number): number {
  if (k <= 0) return 1;
  if (!(lambda > 0)) return 0;
  // P(X >= k) = 1 - sum_{j<k} e^-l l^j / j!; for k well above lambda sum the upper terms directly.
  const logTerm = (j: number) => -lambda + j * Math.log(lambda) - logFactorial(j);
  if (k > lambda) {
    let sum = 0;
    const top = logTerm(k);
    for (let j = k; j < k + 10_000; j++) {
      const t = Math.exp(logTerm(j) - top);
      sum += t;
      if (t < 1e-17 * sum) break;
    }
    return Math.min(1, Math.exp(top) * sum);
  }
  let below = 0;
  for (let j = 0; j < k; j++) below += Math.exp(logTerm(j));
  return Math.max(0, 1 - below);
}

const LOG_FACT: number[] = [0];
function logFactorial(n: number): number {
  if (n < 1000) {
    for (let j = LOG_FACT.length; j <= n; j++) LOG_FACT[j] = LOG_FACT[j - 1] + Math.log(j);
    return LOG_FACT[n];
  }
  // Stirling's series; the 1/(12n) term leaves an error below 1e-10 here.
  return n * Math.log(n) - n + 0.5 * Math.log(2 * Math.PI * n) + 1 / (12 * n);
}

/** Scale factor from the median absolute deviation to the sigma of a Gaussian: 1 / Phi^-1(3/4). */
export const MAD_TO_SIGMA = 1.4826;

/**
 * Counts of values in fixed cells of width `step` over [min, max), with an underflow and an
 * overflow count: medians and MADs in bounded memory whatever the number of values, accurate to
 * half a cell. Mergeable by adding counts.
 */
export class FixedHistogram {
  readonly counts: Float64Array;
  under = 0;
  over = 0;
  total = 0;
  constructor(
    readonly min: number,
    readonly max: number,
    readonly step: number,
  ) {
    this.counts = new Float64Array(Math.round((max - min) / step));
  }
  add(x: number, w = 1): void {
    if (!Number.isFinite(x)) return;
    this.total += w;
    if (x < this.min) this.under += w;
    else if (x >= this.max) this.over += w;
    else this.counts[Math.min(this.counts.length - 1, Math.floor((x - this.min) / this.step))] += w;
  }
  /** The value below which a fraction q of the counts lie (linear within a cell); NaN when empty or in an open end. */
  quantile(q: number): number {
    if (!(this.total > 0)) return NaN;
    const target = q * this.total;
    let acc = this.under;
    if (acc >= target) return NaN;
    for (let k = 0; k < this.counts.length; k++) {
      const c = this.counts[k];
      if (acc + c >= target && c > 0) return this.min + (k + (target - acc) / c) * this.step;
      acc += c;
    }
    return NaN;
  }
  /** Median absolute deviation about `center`, to a cell; NaN when more than half the counts are off the grid. */
  mad(center: number): number {
    if (!(this.total > 0)) return NaN;
    // Distances of cell centres from the centre, with their counts; the open ends are far.
    const d: { x: number; c: number }[] = [];
    for (let k = 0; k < this.counts.length; k++) {
      if (this.counts[k] > 0) d.push({ x: Math.abs(this.min + (k + 0.5) * this.step - center), c: this.counts[k] });
    }
    d.push({ x: Infinity, c: this.under + this.over });
    d.sort((a, b) => a.x - b.x);
    let acc = 0;
    for (const e of d) {
      acc += e.c;
      if (acc >= this.total / 2) return e.x;
    }
    return NaN;
  }
}

/**
 * log10 of the Gaussian likelihood ratio of reading A against reading B of one value, given
 * independent expectations e_j with sigmas s_j (dex): sum_j [(dB_j^2 - dA_j^2) / (2 s_j^2)] / ln 10,
 * where d is the distance of each reading from e_j. The normalisations cancel because both readings
 * share the sigmas. Positive when A is the more probable.
 */
export function log10GaussianRatio(a: number, b: number, values: ArrayLike<number>, sigmas: ArrayLike<number>, n: number): number {
  let s = 0;
  for (let j = 0; j < n; j++) {
    const da = a - values[j];
    const db = b - values[j];
    s += (db * db - da * da) / (2 * sigmas[j] * sigmas[j]);
  }
  return s / Math.LN10;
}
