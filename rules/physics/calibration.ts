/**
 * A catalog's own mass-luminosity relation: a robust piecewise fit of log L against log M over its
 * main-sequence stars, with the break points of Eker et al. 2018, and its intrinsic scatter per
 * segment from the median absolute deviation with the measurement errors removed in quadrature.
 *
 * The fit works in two passes with bounded memory. The first pass keeps a mergeable summary: for
 * each segment, cells of 0.02 dex in log M by 0.02 dex in the residual from the published line,
 * each holding the count and the sums of x, y, x^2, xy and y^2 (x = log M, y = log L), plus a
 * fixed histogram of the stars' measurement errors. Summaries of several inputs or shards merge by
 * adding cell by cell. The fit then iterates reweighted least squares over the cells (the sums are
 * exact; only the weights use the cell mean), so its cost depends on the number of cells, never on
 * the number of stars.
 */
import { EKER_2018_SEGMENTS } from './mass-luminosity.js';
import { MAD_TO_SIGMA } from './statistics.js';

/** Residual cells: 0.02 dex from -3 to +3 dex around the published line; farther stars are counted as off the grid. */
const RESID_MIN = -3;
const RESID_STEP = 0.02;
const RESID_CELLS = 300;
/** Mass sub-bins within a segment, in dex of log M. */
const MASS_STEP = 0.02;
/** Measurement-error histogram: 0.01 dex cells up to 1 dex, the last cell holds everything above. */
const ERR_STEP = 0.01;
const ERR_CELLS = 101;
/** Sums kept per cell: n, x, y, xx, xy, yy. */
const SUMS = 6;

/** Fewer stars than this in a segment give no fit: the published segment is used there. */
export const CALIBRATION_MIN_STARS = 30;
/** A segment whose stars span less than this sd in log M (dex) fits an offset with the published slope. */
export const CALIBRATION_MIN_SPREAD_DEX = 0.02;
/** The fit differs from the published relation when an offset or slope difference exceeds this many of its sigmas. */
export const CALIBRATION_DIFFERENCE_SIGMA = 3;
/** Intrinsic scatter is never taken below this (dex): half the cell size and a margin for the cells' quantisation. */
export const CALIBRATION_SCATTER_FLOOR = 0.02;
/** Tukey biweight and Huber tuning constants (95 % efficiency at the Gaussian; common practice). */
const BIWEIGHT_C = 4.685;
const HUBER_C = 1.345;

export interface CalibrationSegmentSpec {
  /** Mass range (M_sun): lower exclusive except for the first segment, upper inclusive, as in Eker 2018. */
  lower: number;
  upper: number;
  /** The published line in this range. */
  slope: number;
  intercept: number;
}

/** Eker et al. 2018, Table 4, with each segment's lower bound: the segments the catalog fit keeps. */
export const CALIBRATION_SEGMENTS: readonly CalibrationSegmentSpec[] = EKER_2018_SEGMENTS.map((s, k) => ({
  lower: k === 0 ? 0.179 : EKER_2018_SEGMENTS[k - 1].upper,
  upper: s.upper,
  slope: s.a,
  intercept: s.b,
}));

const SEG_LOG = CALIBRATION_SEGMENTS.map((s) => {
  const lo = Math.log10(s.lower);
  const hi = Math.log10(s.upper);
  return { lo, hi, sub: Math.max(1, Math.ceil((hi - lo) / MASS_STEP - 1e-9)) };
});
const BIN_OFFSET: number[] = [];
{
  let acc = 0;
  for (const s of SEG_LOG) {
    BIN_OFFSET.push(acc);
    acc += s.sub;
  }
}

/** Segment index for a mass (M_sun), -1 outside 0.179-31. */
export function calibrationSegment(m: number): number {
  if (!(m >= CALIBRATION_SEGMENTS[0].lower)) return -1;
  for (let k = 0; k < CALIBRATION_SEGMENTS.length; k++) if (m <= CALIBRATION_SEGMENTS[k].upper) return k;
  return -1;
}

/** The summary as plain JSON: what a shard writes and a merge step reads. */
export type CalibrationState = {
  kind: 'mass-luminosity-calibration';
  version: 1;
  /** Each entry: [cell key, n, sum x, sum y, sum xx, sum xy, sum yy]. */
  cells: number[][];
  /** Per segment: stars more than 3 dex from the published line (outliers by any measure). */
  offGrid: number[];
  /** Per segment: the measurement-error histogram (ERR_CELLS counts). */
  errors: number[][];
  /** Per segment: stars with no stated error. */
  noError: number[];
};

/** The first-pass summary: bounded by the number of cells (about 33 000), whatever the number of stars. */
export class CalibrationSummary {
  private readonly cells = new Map<number, Float64Array>();
  private readonly offGrid = new Float64Array(CALIBRATION_SEGMENTS.length);
  private readonly errors = CALIBRATION_SEGMENTS.map(() => new Float64Array(ERR_CELLS));
  private readonly noError = new Float64Array(CALIBRATION_SEGMENTS.length);

  /**
   * One main-sequence star: mass (M_sun), log L and its measurement sigma in dex (the combined
   * sigma_logL and slope x sigma_logM; NaN when the row states no error). Stars outside 0.179-31
   * M_sun are ignored.
   */
  add(m: number, logL: number, sigmaMeas: number): void {
    const k = calibrationSegment(m);
    if (k < 0 || !Number.isFinite(logL)) return;
    const seg = CALIBRATION_SEGMENTS[k];
    const x = Math.log10(m);
    const r = logL - (seg.slope * x + seg.intercept);
    const cell = Math.floor((r - RESID_MIN) / RESID_STEP);
    if (!(cell >= 0 && cell < RESID_CELLS)) {
      this.offGrid[k]++;
      return;
    }
    const sub = Math.min(SEG_LOG[k].sub - 1, Math.max(0, Math.floor((x - SEG_LOG[k].lo) / MASS_STEP)));
    const key = (BIN_OFFSET[k] + sub) * RESID_CELLS + cell;
    let acc = this.cells.get(key);
    if (!acc) {
      acc = new Float64Array(SUMS);
      this.cells.set(key, acc);
    }
    acc[0]++;
    acc[1] += x;
    acc[2] += logL;
    acc[3] += x * x;
    acc[4] += x * logL;
    acc[5] += logL * logL;
    if (Number.isFinite(sigmaMeas) && sigmaMeas >= 0) this.errors[k][Math.min(ERR_CELLS - 1, Math.floor(sigmaMeas / ERR_STEP))]++;
    else this.noError[k]++;
  }

  get stars(): number {
    let n = 0;
    for (const c of this.cells.values()) n += c[0];
    for (const o of this.offGrid) n += o;
    return n;
  }

  toState(): CalibrationState {
    const keys = [...this.cells.keys()].sort((a, b) => a - b);
    return {
      kind: 'mass-luminosity-calibration',
      version: 1,
      cells: keys.map((k) => [k, ...this.cells.get(k)!]),
      offGrid: [...this.offGrid],
      errors: this.errors.map((e) => [...e]),
      noError: [...this.noError],
    };
  }

  static fromState(s: CalibrationState): CalibrationSummary {
    if (s.kind !== 'mass-luminosity-calibration' || s.version !== 1) throw new Error('not a mass-luminosity calibration state (version 1)');
    const out = new CalibrationSummary();
    out.addState(s);
    return out;
  }

  private addState(s: CalibrationState): void {
    for (const row of s.cells) {
      const key = row[0];
      let acc = this.cells.get(key);
      if (!acc) {
        acc = new Float64Array(SUMS);
        this.cells.set(key, acc);
      }
      for (let j = 0; j < SUMS; j++) acc[j] += row[j + 1];
    }
    for (let k = 0; k < CALIBRATION_SEGMENTS.length; k++) {
      this.offGrid[k] += s.offGrid[k] ?? 0;
      this.noError[k] += s.noError[k] ?? 0;
      const e = s.errors[k] ?? [];
      for (let j = 0; j < ERR_CELLS; j++) this.errors[k][j] += e[j] ?? 0;
    }
  }

  /** Merges two states into a new one (pure: neither argument changes). */
  static merge(a: CalibrationState, b: CalibrationState): CalibrationState {
    const out = CalibrationSummary.fromState(a);
    out.addState(b);
    return out.toState();
  }

  /** The cells of segment k, as parallel arrays. */
  segmentCells(k: number): { n: number[]; sx: number[]; sy: number[]; sxx: number[]; sxy: number[]; syy: number[] } {
    const lo = BIN_OFFSET[k] * RESID_CELLS;
    const hi = (BIN_OFFSET[k] + SEG_LOG[k].sub) * RESID_CELLS;
    const out = { n: [] as number[], sx: [] as number[], sy: [] as number[], sxx: [] as number[], sxy: [] as number[], syy: [] as number[] };
    const keys = [...this.cells.keys()].filter((key) => key >= lo && key < hi).sort((a, b) => a - b);
    for (const key of keys) {
      const c = this.cells.get(key)!;
      out.n.push(c[0]);
      out.sx.push(c[1]);
      out.sy.push(c[2]);
      out.sxx.push(c[3]);
      out.sxy.push(c[4]);
      out.syy.push(c[5]);
    }
    return out;
  }

  offGridOf(k: number): number {
    return this.offGrid[k];
  }

  /** Median measurement sigma (dex) of segment k's stars with a stated error, and how many there are. */
  medianError(k: number): { median: number; stars: number } {
    const h = this.errors[k];
    let total = 0;
    for (const c of h) total += c;
    if (total === 0) return { median: NaN, stars: 0 };
    let acc = 0;
    for (let j = 0; j < ERR_CELLS; j++) {
      acc += h[j];
      if (acc >= total / 2) return { median: Math.min(j + 0.5, ERR_CELLS - 1) * ERR_STEP, stars: total };
    }
    return { median: NaN, stars: total };
  }

  starsWithoutError(k: number): number {
    return this.noError[k];
  }
}

/** One segment of the catalog's fit, compared with the published line. */
export interface SegmentFit {
  lower: number;
  upper: number;
  /** Stars in the segment (on the residual grid, plus those more than 3 dex off it). */
  stars: number;
  starsOffGrid: number;
  /** `line`: slope and intercept fitted; `offset`: the published slope kept, the intercept fitted (too narrow a mass spread); `published`: too few stars, the published segment used. */
  mode: 'line' | 'offset' | 'published';
  slope: number;
  intercept: number;
  slopeErr: number;
  interceptErr: number;
  /** Weighted mean log M of the segment's stars, where the offset from the published line is measured. */
  pivotLogM: number;
  publishedSlope: number;
  publishedIntercept: number;
  /** Fitted minus published log L at the pivot (dex), its sigma, and their ratio. */
  offsetDex: number;
  offsetErrDex: number;
  offsetSigma: number;
  /** (fitted - published slope) / slope sigma; NaN unless mode is `line`. */
  slopeSigma: number;
  /** Whether the fit differs from the published segment by more than CALIBRATION_DIFFERENCE_SIGMA. */
  differs: boolean;
  /** Robust scatter (1.4826 x MAD) of log L about the fit, measurement errors included (dex). */
  scatterDex: number;
  /** Median measurement sigma of the stars with a stated error (dex), and how many had one. */
  medianMeasurementErrorDex: number;
  starsWithErrors: number;
  /** sqrt(scatter^2 - median error^2), never below CALIBRATION_SCATTER_FLOOR (dex). */
  intrinsicScatterDex: number;
}

export interface CatalogFit {
  stars: number;
  segments: SegmentFit[];
}

function weightedMedian(values: number[], weights: number[], extraInfinite = 0): number {
  const idx = values.map((_, i) => i).sort((a, b) => values[a] - values[b]);
  let total = extraInfinite;
  for (const w of weights) total += w;
  if (!(total > 0)) return NaN;
  let acc = 0;
  for (const i of idx) {
    acc += weights[i];
    if (acc >= total / 2) return values[i];
  }
  return Infinity;
}

/**
 * Robust fit of one segment: start from the published slope with the intercept moved to the
 * median residual, ten Huber steps, then Tukey biweight steps to convergence, the scale
 * re-estimated from the MAD at every step. Covariance: the reweighted least-squares sandwich
 * A^-1 (sum w^2 r^2 x x^T) A^-1 with the final weights held fixed.
 */
function fitSegment(summary: CalibrationSummary, k: number): SegmentFit {
  const spec = CALIBRATION_SEGMENTS[k];
  const c = summary.segmentCells(k);
  const m = c.n.length;
  const offGrid = summary.offGridOf(k);
  let n = 0;
  let sx0 = 0;
  let sxx0 = 0;
  for (let j = 0; j < m; j++) {
    n += c.n[j];
    sx0 += c.sx[j];
    sxx0 += c.sxx[j];
  }
  const err = summary.medianError(k);
  const base: SegmentFit = {
    lower: spec.lower,
    upper: spec.upper,
    stars: n + offGrid,
    starsOffGrid: offGrid,
    mode: 'published',
    slope: spec.slope,
    intercept: spec.intercept,
    slopeErr: NaN,
    interceptErr: NaN,
    pivotLogM: n > 0 ? sx0 / n : NaN,
    publishedSlope: spec.slope,
    publishedIntercept: spec.intercept,
    offsetDex: NaN,
    offsetErrDex: NaN,
    offsetSigma: NaN,
    slopeSigma: NaN,
    differs: false,
    scatterDex: NaN,
    medianMeasurementErrorDex: err.median,
    starsWithErrors: err.stars,
    intrinsicScatterDex: NaN,
  };
  if (n < CALIBRATION_MIN_STARS) return base;
  const spread = Math.sqrt(Math.max(0, sxx0 / n - (sx0 / n) ** 2));
  const line = spread >= CALIBRATION_MIN_SPREAD_DEX;

  const xm = c.sx.map((s, j) => s / c.n[j]);
  const ym = c.sy.map((s, j) => s / c.n[j]);
  let a = spec.slope;
  let b = spec.intercept;
  const resid = new Array<number>(m);
  const w = new Array<number>(m).fill(1);
  const residuals = () => {
    for (let j = 0; j < m; j++) resid[j] = ym[j] - (a * xm[j] + b);
  };
  // Each cell stands for its stars by two points at its mean residual +- their spread within the
  // cell (from the exact sums), so the median and MAD keep the spread inside the 0.02 dex cells.
  const pts = new Array<number>(2 * m);
  const ptw = new Array<number>(2 * m);
  const scale = () => {
    for (let j = 0; j < m; j++) {
      const q = c.syy[j] - 2 * a * c.sxy[j] - 2 * b * c.sy[j] + a * a * c.sxx[j] + 2 * a * b * c.sx[j] + b * b * c.n[j];
      const sd = Math.sqrt(Math.max(0, q / c.n[j] - resid[j] * resid[j]));
      pts[2 * j] = resid[j] - sd;
      pts[2 * j + 1] = resid[j] + sd;
      ptw[2 * j] = ptw[2 * j + 1] = c.n[j] / 2;
    }
    const med = weightedMedian(pts, ptw);
    const mad = weightedMedian(
      pts.map((r) => Math.abs(r - med)),
      ptw,
      offGrid,
    );
    return Math.max(0.005, MAD_TO_SIGMA * mad);
  };
  residuals();
  b += weightedMedian(resid, c.n);
  const solve = () => {
    let s0 = 0;
    let sx = 0;
    let sy = 0;
    let sxx = 0;
    let sxy = 0;
    for (let j = 0; j < m; j++) {
      const wj = w[j];
      if (wj === 0) continue;
      s0 += wj * c.n[j];
      sx += wj * c.sx[j];
      sy += wj * c.sy[j];
      sxx += wj * c.sxx[j];
      sxy += wj * c.sxy[j];
    }
    if (!(s0 > 0)) return;
    if (line) {
      const cxx = sxx - (sx * sx) / s0;
      const cxy = sxy - (sx * sy) / s0;
      if (cxx > 0) {
        a = cxy / cxx;
        b = (sy - a * sx) / s0;
        return;
      }
    }
    b = (sy - a * sx) / s0;
  };
  for (let it = 0; it < 60; it++) {
    residuals();
    const s = scale();
    const huber = it < 10;
    for (let j = 0; j < m; j++) {
      const u = resid[j] / s;
      if (huber) w[j] = Math.abs(u) <= HUBER_C ? 1 : HUBER_C / Math.abs(u);
      else {
        const v = u / BIWEIGHT_C;
        w[j] = Math.abs(v) < 1 ? (1 - v * v) ** 2 : 0;
      }
    }
    const pa = a;
    const pb = b;
    solve();
    if (!huber && Math.abs(a - pa) < 1e-7 && Math.abs(b - pb) < 1e-7) break;
  }
  residuals();
  const s = scale();

  // Sandwich covariance with the final weights.
  let A00 = 0;
  let A01 = 0;
  let A11 = 0;
  let M00 = 0;
  let M01 = 0;
  let M11 = 0;
  for (let j = 0; j < m; j++) {
    const wj = w[j];
    if (wj === 0) continue;
    A00 += wj * c.n[j];
    A01 += wj * c.sx[j];
    A11 += wj * c.sxx[j];
    // Sum over the cell's stars of (y - a x - b)^2, exact from the sums.
    const q = c.syy[j] - 2 * a * c.sxy[j] - 2 * b * c.sy[j] + a * a * c.sxx[j] + 2 * a * b * c.sx[j] + b * b * c.n[j];
    const x = xm[j];
    const w2q = wj * wj * Math.max(0, q);
    M00 += w2q;
    M01 += w2q * x;
    M11 += w2q * x * x;
  }
  const pivot = A01 / A00;
  let varA = NaN;
  let varB: number;
  let covAB = NaN;
  if (line) {
    const det = A00 * A11 - A01 * A01;
    const i00 = A11 / det;
    const i01 = -A01 / det;
    const i11 = A00 / det;
    // C = Ainv M Ainv for 2x2 symmetric matrices; index 0 = intercept, 1 = slope.
    const t00 = i00 * M00 + i01 * M01;
    const t01 = i00 * M01 + i01 * M11;
    const t10 = i01 * M00 + i11 * M01;
    const t11 = i01 * M01 + i11 * M11;
    varB = t00 * i00 + t01 * i01;
    covAB = t00 * i01 + t01 * i11;
    varA = t10 * i01 + t11 * i11;
  } else {
    varB = M00 / (A00 * A00);
  }
  const fitAtPivot = a * pivot + b;
  const pubAtPivot = spec.slope * pivot + spec.intercept;
  const varPivot = line ? varB + 2 * pivot * covAB + pivot * pivot * varA : varB;
  const offset = fitAtPivot - pubAtPivot;
  const offsetErr = Math.sqrt(Math.max(0, varPivot));
  const slopeErr = line ? Math.sqrt(Math.max(0, varA)) : NaN;
  const slopeSigma = line ? (a - spec.slope) / slopeErr : NaN;
  const offsetSigma = offset / offsetErr;
  const intrinsic = Number.isFinite(err.median) ? Math.sqrt(Math.max(0, s * s - err.median * err.median)) : s;
  return {
    ...base,
    mode: line ? 'line' : 'offset',
    slope: a,
    intercept: b,
    slopeErr,
    interceptErr: Math.sqrt(Math.max(0, varB)),
    pivotLogM: pivot,
    offsetDex: offset,
    offsetErrDex: offsetErr,
    offsetSigma,
    slopeSigma,
    differs: Math.abs(offsetSigma) > CALIBRATION_DIFFERENCE_SIGMA || (line && Math.abs(slopeSigma) > CALIBRATION_DIFFERENCE_SIGMA),
    scatterDex: s,
    intrinsicScatterDex: Math.max(CALIBRATION_SCATTER_FLOOR, intrinsic),
  };
}

/** The catalog's fit, segment by segment. */
export function fitCatalogRelation(summary: CalibrationSummary): CatalogFit {
  return { stars: summary.stars, segments: CALIBRATION_SEGMENTS.map((_, k) => fitSegment(summary, k)) };
}
