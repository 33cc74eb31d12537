/**
 * What every unit mix-up screen shares: the readings a cell can have, the decision which reading
 * fits the rest of the row best, and the whole-column verdict with its capped row buffer. Each rule
 * keeps its own loop over the batch and its own expectations (Stefan-Boltzmann, gravity, a
 * mass-luminosity relation); this module never knows which quantity it judges beyond the spec.
 */
import { HeldQueue, type HeldQueueState } from '../../engine/held.js';
import type { SpillStore } from '../../engine/spill.js';
import { COLUMN_VERDICT_MIN_ROWS, columnFinding, fmt, round6, rowFinding } from '../../engine/findings.js';
import type { NumericQuantity } from '../../engine/quantities.js';
import { QUANTITY_INFO } from '../../engine/quantities.js';
import { isUnusable, markUnusable } from '../../engine/usable.js';
import { shiftFinding } from '../../engine/runner.js';
import { RuleStats, type Batch, type Finding, type FindingSink, type ParamSpec, type ParamValues, type QuantityColumn, type RowShift, type RuleRun } from '../../engine/types.js';
import { L_SUN_W } from '../../physics/constants.js';
import { log10GaussianRatio, normalUpperTail, poissonUpperTail } from '../../physics/statistics.js';
import { LINEAR_FACTORS } from '../../physics/units.js';

/**
 * One way to read a cell: log10 of the value in the canonical unit is `(log ? raw : log10 raw) +
 * offset`. `plausibleMin/Max` (log10 canonical) narrow where this reading is believed when the row
 * has nothing else to judge it by; `minRaw` keeps a reading off cells written smaller than that
 * (a linear g is a large number: 27 400 cm s^-2 for the Sun, never 4.4).
 */
export interface UnitReading {
  unit: string;
  log: boolean;
  offset: number;
  plausibleMin?: number;
  plausibleMax?: number;
  minRaw?: number;
}

export function readingLog(r: UnitReading, raw: number): number {
  if (r.minRaw !== undefined && !(raw >= r.minRaw)) return NaN;
  return r.log ? raw + r.offset : raw > 0 ? Math.log10(raw) + r.offset : NaN;
}

const LOG_LSUN_W = Math.log10(L_SUN_W);
const log10 = Math.log10;

/** Luminosity: solar, W and erg/s, each linear or log (IAU 2015 B3 L_sun = 3.828e26 W). */
export const LUMINOSITY_READINGS: readonly UnitReading[] = [
  { unit: 'solLum', log: false, offset: 0 },
  { unit: 'W', log: false, offset: -LOG_LSUN_W },
  { unit: 'erg/s', log: false, offset: -(LOG_LSUN_W + 7) },
  { unit: 'log(solLum)', log: true, offset: 0 },
  { unit: 'log(W)', log: true, offset: -LOG_LSUN_W },
  { unit: 'log(erg/s)', log: true, offset: -(LOG_LSUN_W + 7) },
];

/**
 * Mass: kg and g through (GM)_sun / G, planet masses through the IAU 2015 B3 GM ratios
 * (physics-reference.md §9: 30.299, 33.299, 3.020 and 5.522 dex). Earth masses come before Jupiter
 * masses so that, with nothing else to go by, 3e5 reads as 0.9 M_sun rather than 286 M_sun.
 */
export const MASS_READINGS: readonly UnitReading[] = [
  { unit: 'solMass', log: false, offset: 0 },
  { unit: 'kg', log: false, offset: log10(LINEAR_FACTORS.mass.kg) },
  { unit: 'g', log: false, offset: log10(LINEAR_FACTORS.mass.g) },
  { unit: 'earthMass', log: false, offset: log10(LINEAR_FACTORS.mass.earthMass) },
  { unit: 'jupiterMass', log: false, offset: log10(LINEAR_FACTORS.mass.jupiterMass) },
  { unit: 'log(solMass)', log: true, offset: 0 },
];

/** Radius: lengths through the nominal R_sun, planet radii and the au (§9: 5.842 dex for km ...). */
export const RADIUS_READINGS: readonly UnitReading[] = [
  { unit: 'solRad', log: false, offset: 0 },
  { unit: 'km', log: false, offset: log10(LINEAR_FACTORS.radius.km) },
  { unit: 'm', log: false, offset: log10(LINEAR_FACTORS.radius.m) },
  { unit: 'cm', log: false, offset: log10(LINEAR_FACTORS.radius.cm) },
  { unit: 'earthRad', log: false, offset: log10(LINEAR_FACTORS.radius.earthRad) },
  { unit: 'jupiterRad', log: false, offset: log10(LINEAR_FACTORS.radius.jupiterRad) },
  { unit: 'au', log: false, offset: log10(LINEAR_FACTORS.radius.au) },
  { unit: 'log(solRad)', log: true, offset: 0 },
];

/**
 * Teff: kelvin, log Teff and kK. A log reading is believed on its own only for 3.3-4.8
 * (physics-reference.md §9: "Teff from 3.3 to 4.8 is almost certainly log Teff").
 */
export const TEFF_READINGS: readonly UnitReading[] = [
  { unit: 'K', log: false, offset: 0 },
  { unit: 'log(K)', log: true, offset: 0, plausibleMin: 3.3, plausibleMax: 4.8 },
  { unit: 'kK', log: false, offset: 3 },
];

/**
 * logg: log cgs, log SI (+2 dex, §9), and linear g in either system. A linear reading is tried only
 * on cells that could not be a log g of a dwarf or subgiant anyway: 100 cm s^-2 is logg 2, 20 m s^-2
 * logg 3.3; smaller linear values (giants) look like ordinary log g and cannot be told apart.
 */
export const LOGG_READINGS: readonly UnitReading[] = [
  { unit: 'log(cm.s-2)', log: true, offset: 0 },
  { unit: 'log(m.s-2)', log: true, offset: 2 },
  { unit: 'cm.s-2', log: false, offset: 0, minRaw: 100 },
  { unit: 'm.s-2', log: false, offset: 2, minRaw: 20 },
];

/** What a unit mix-up screen judges and how its messages name things. */
export interface UnitMixupSpec {
  id: string;
  quantity: NumericQuantity;
  readings: readonly UnitReading[];
  /** Canonical unit of the quantity, e.g. `solMass`; for logg the log unit itself. */
  canonicalUnit: string;
  /** Word for the quantity ("luminosity"), its log symbol ("log L") and the values key of the expectation. */
  label: string;
  symbol: string;
  expectedKey: string;
  /** The canonical value is itself a log (logg): expectations and suggestions are given as logs. */
  canonicalIsLog?: boolean;
  /** Text for a value given as log10 in the canonical unit, e.g. "1.02 L_sun". */
  describe(log: number): string;
  /** Values (log10 canonical) real stars have; used only when nothing else in the row can judge the cell. */
  plausibleMin: number;
  plausibleMax: number;
  /** With nothing else to judge by: the plausible reading nearest this wins; unset, the first in list order. */
  typicalLog?: number;
  /**
   * The quantity is one decimal-shift judges (a linear M, R, L or Teff): a reading is not claimed
   * where the declared value moved by one decimal place fits the row clearly better
   * (by more than 0.5 sigma), so a slipped decimal point is left to decimal-shift rather than read
   * as a coincidental unit (0.096 M_sun as log M = 0.096, that is 1.25 M_sun). Not where that
   * reading is the column's habit (see UnitMixupScreen.learn): a column that mixes units says which.
   */
  shiftable?: boolean;
}

/** A unit reading that fits within this many sigma of the best power-of-ten shift keeps precedence (decimal-shift's UNIT_MARGIN_SIGMA). */
const SHIFT_MARGIN_SIGMA = 0.5;
/**
 * Only one place either way competes with the readings: the common slip. Two or three places
 * coincide too often with a log value near 0 read as linear (0.014 is log L = 0.014, or 1.4 / 100),
 * where the column's other rows usually say which.
 */
const SHIFTS = [-1, 1] as const;
/** A reading chosen for this many rows of the sample, and this share of those judged, is the column's habit. */
const COLUMN_HABIT_MIN = 10;
const COLUMN_HABIT_SHARE = 0.02;

/** Whether `fired` rows read in a unit, of `judged`, make that unit the column's habit. */
function columnHabit(fired: number, judged: number): boolean {
  return fired >= COLUMN_HABIT_MIN && fired >= COLUMN_HABIT_SHARE * judged;
}

/** Parameters every unit mix-up screen has; a rule may add its own after them. */
export const MIXUP_PARAMS: readonly ParamSpec[] = [
  {
    name: 'minLikelihoodRatio',
    type: 'number',
    default: 1000,
    min: 1,
    description:
      "The suggested unit must be at least this many times more probable than the declared one given the row's other values (Gaussian likelihood of each reading's residuals).",
  },
  { name: 'acceptSigma', type: 'number', default: 3, min: 0.5, description: 'Where the declared value is one stars can have, the suggested reading must also fit every expectation within this many sigma.' },
  { name: 'columnFraction', type: 'number', default: 0.5, min: 0, max: 1, description: 'Above this fraction of judged rows, one finding is made for the whole column.' },
];

/**
 * For screens whose alternative units can turn one stellar value into another: a cell whose
 * declared value stars can have is judged only when it misses every expectation by this many dex
 * too, so one odd row of a real catalog does not read as a unit slip.
 */
export const MIN_MISS_PARAMS: readonly ParamSpec[] = [
  {
    name: 'minMissDex',
    type: 'number',
    default: 0.9,
    min: 0,
    description: 'A declared value that stars can have must miss every expectation by at least this many dex (two or more expectations).',
  },
  {
    name: 'minMissSingleDex',
    type: 'number',
    default: 1.5,
    min: 0,
    description: 'The same where only one relation judges the cell.',
  },
];

/** Most rows kept for the per-row listing while deciding whether the whole column is affected. */
const ROW_BUFFER_CAP = 20_000;

/** Sum over the row's expectations of ((lg - e_j) / s_j)^2. A function here, not a closure per row. */
function chiSquare(lg: number, e: Expectations): number {
  let c = 0;
  for (let j = 0; j < e.n; j++) {
    const d = (lg - e.value[j]) / e.sigma[j];
    c += d * d;
  }
  return c;
}
/**
 * Whether moving the declared value's decimal point by one place (SHIFTS) fits every expectation
 * within acceptSigma and beats the reading at `lg` by more than SHIFT_MARGIN_SIGMA at its worst.
 */
function shiftFitsBetter(lg: number, declaredLog: number, e: Expectations, acceptSigma: number): boolean {
  const unitZ = worstZ(lg, e);
  for (const sh of SHIFTS) {
    const z = worstZ(declaredLog + sh, e);
    if (z <= acceptSigma && z + SHIFT_MARGIN_SIGMA < unitZ) return true;
  }
  return false;
}

/** The largest |lg - e_j| / s_j over the row's expectations. */
function worstZ(lg: number, e: Expectations): number {
  let z = 0;
  for (let j = 0; j < e.n; j++) z = Math.max(z, Math.abs(lg - e.value[j]) / e.sigma[j]);
  return z;
}
const MAX_BASES = 4;
/** Fewer plausible declared values than this in the sample give no column distribution to weigh readings by. */
const COLUMN_PRIOR_MIN_ROWS = 20;
/** The column distribution is never taken narrower than this (dex), so one catalog's spread cannot rule a reading out. */
const COLUMN_PRIOR_MIN_SIGMA = 0.5;
/** Chance terms beyond this many sigma add less than 1e-19 per row and are not summed. */
const CHANCE_Z_MAX = 9;

/** Mean of the lower and upper error of row i, whichever exist; 0 when neither does. */
export function meanErr(lo: Float64Array | null, hi: Float64Array | null, i: number): number {
  const a = lo ? lo[i] : NaN;
  const b = hi ? hi[i] : NaN;
  if (Number.isFinite(a) && Number.isFinite(b)) return (a + b) / 2;
  return Number.isFinite(a) ? a : Number.isFinite(b) ? b : 0;
}

/** Relative error of row i of a linear column, in dex; 0 without an error column. */
export function dexErr(lo: Float64Array | null, hi: Float64Array | null, value: number, i: number): number {
  const e = meanErr(lo, hi, i);
  return value > 0 && e > 0 ? e / (value * Math.LN10) : 0;
}

/**
 * Error of row i of a linear quantity in dex: the log errors where the column keeps them
 * (luminosity), else the relative error. Not for logg, whose errors already are dex.
 */
export function columnDexErr(col: QuantityColumn, i: number): number {
  if (col.logErrLo || col.logErrHi) return meanErr(col.logErrLo ?? null, col.logErrHi ?? null, i);
  return dexErr(col.errLo, col.errHi, col.value[i], i);
}

/**
 * What the rest of a row implies for the cell: up to four independent bases, each a value (log10
 * canonical) with its sigma in dex and a code the rule uses to word its message. Reused row after
 * row, so the hot loop makes no object.
 */
export class Expectations {
  n = 0;
  readonly value = new Float64Array(MAX_BASES);
  readonly sigma = new Float64Array(MAX_BASES);
  readonly basis = new Uint8Array(MAX_BASES);
  clear(): void {
    this.n = 0;
  }
  add(value: number, sigma: number, basis: number): void {
    if (!Number.isFinite(value) || !(sigma > 0) || this.n >= MAX_BASES) return;
    this.value[this.n] = value;
    this.sigma[this.n] = sigma;
    this.basis[this.n] = basis;
    this.n++;
  }
  has(basis: number): boolean {
    for (let j = 0; j < this.n; j++) if (this.basis[j] === basis) return true;
    return false;
  }
}

/** What a screen kept over a row range (see RangeState): counts, and the first row findings in row order. */
export interface ScreenState {
  seen: boolean;
  input: number;
  column: string;
  judged: number;
  withExpectation: number;
  beyond3: number;
  chance: number;
  firedByUnit: number[];
  ambiguousRows: number;
  leftToShift: number;
  kept: HeldQueueState;
}

/** A screen rule's own judging of one batch, done by the given screen: what its `check` does. */
export type ScreenLoop = (screen: UnitMixupScreen, batch: Batch, stats: RuleStats) => void;

/**
 * The decision and the bookkeeping of one unit mix-up screen over one input: which reading fits,
 * the cell marked unusable, counts per likely unit, the capped buffer of row findings and the
 * column verdict at the end.
 */
export class UnitMixupScreen {
  readonly minLog10Ratio: number;
  readonly acceptSigma: number;
  readonly columnFraction: number;
  /** See MIN_MISS_PARAMS; 0 for a rule without those parameters. */
  readonly minMiss: number;
  readonly minMissSingle: number;
  readonly declaredUnit: string;
  /** Index of the declared unit among the readings, -1 when it is none of them. */
  readonly declaredIndex: number;
  /** Whether power-of-ten shifts of the declared value compete with the readings (spec.shiftable and a linear declared unit). */
  private readonly shiftable: boolean;
  /** Rows left to decimal-shift because a power of ten fits better than any unit. */
  private leftToShift = 0;
  /** Set by `decide`: distance of the chosen reading from the primary expectation (dex; NaN without one). */
  bestDist = NaN;
  /**
   * Set by `decide`: log10 of how many times more probable the chosen reading is than the declared
   * one given the row's expectations (Infinity when the declared reading is impossible; NaN when
   * the row had no expectation), and the next most probable reading with its log10 ratio to the
   * chosen one (-1 and NaN when there is none).
   */
  log10Ratio = NaN;
  runnerUp = -1;
  runnerUpLog10Ratio = NaN;
  judged = 0;
  fired = 0;
  /** Rows where the row fitted a reading but another cell of the row could explain it as well (the rule calls `ambiguous`). */
  ambiguousRows = 0;
  /** Rows judged against at least one expectation, and those whose declared reading misses the first by more than 3 sigma. */
  private withExpectation = 0;
  private beyond3 = 0;
  /** Expected number of rows that fire by chance if every declared value were right and the residuals Gaussian. */
  private chance = 0;
  private readonly firedByUnit: number[];
  /** The listed row findings, up to ROW_BUFFER_CAP, held in the spill store until the end of the input. */
  private readonly buffer: HeldQueue<Finding>;
  private input = 0;
  private column = '';
  /** Whether `input` and `column` are known: a run that only absorbs ranges sees no batch. */
  private seen = false;
  /**
   * Per reading, whether it is the column's habit (see `learn`); null until learned. A throwaway
   * screen that judges the sample keeps it null and decides each row by the sample rows before it.
   */
  private habit: Uint8Array | null = null;
  /** A throwaway screen of `learn`: it counts, but makes no row findings nobody would read. */
  private probing = false;
  /** The column's distribution of declared values (see `learnPrior`): median and spread in dex, NaN when unknown. */
  private priorCenter = NaN;
  private priorSigma = NaN;

  constructor(
    readonly spec: UnitMixupSpec,
    private readonly params: ParamValues,
    declaredUnit: string | undefined,
    private readonly skipFlagged = true,
    spill?: SpillStore,
  ) {
    this.buffer = new HeldQueue<Finding>(ROW_BUFFER_CAP, spill);
    this.minLog10Ratio = Math.log10(params.minLikelihoodRatio as number);
    this.acceptSigma = params.acceptSigma as number;
    this.columnFraction = params.columnFraction as number;
    this.minMiss = typeof params.minMissDex === 'number' ? params.minMissDex : 0;
    this.minMissSingle = typeof params.minMissSingleDex === 'number' ? params.minMissSingleDex : this.minMiss;
    this.declaredUnit = declaredUnit ?? spec.readings[0].unit;
    this.declaredIndex = spec.readings.findIndex((r) => r.unit === this.declaredUnit);
    this.shiftable = spec.shiftable === true && this.declaredIndex >= 0 && !spec.readings[this.declaredIndex].log;
    this.firedByUnit = new Array<number>(spec.readings.length).fill(0);
  }

  /**
   * Learns, once, what the column is like from the input's sample (its first rows, the same for
   * every thread, range and shard), so that a row's verdict depends on the row alone: the column's
   * distribution of declared values (`learnPrior`) and its habit, the readings the column shows
   * often. For the habit, `loop` (the rule's own judging) runs over a copy of the sample with a
   * throwaway screen, which decides each sample row by the sample rows before it; a reading it
   * chose for at least 10 rows, and 2 % of those judged, is the habit, and a row of any batch
   * that a slipped decimal point fits better (UnitMixupSpec.shiftable) is read in it only then.
   * The copy starts with no cells marked, so the sample itself is never marked. Called again
   * after the first learning it does nothing; rule tests and plain library use, which have no
   * sample, learn from the first batch checked instead.
   */
  learn(sample: Batch | undefined, loop: ScreenLoop): void {
    if (this.habit || !sample) return;
    const probe = new UnitMixupScreen(this.spec, this.params, this.declaredUnit, this.skipFlagged);
    probe.probing = true;
    const copy: Batch = { ...sample, unusable: {} };
    probe.learnPrior(copy);
    loop(probe, copy, new RuleStats());
    this.priorCenter = probe.priorCenter;
    this.priorSigma = probe.priorSigma;
    this.habit = Uint8Array.from(probe.firedByUnit, (n) => (columnHabit(n, probe.judged) ? 1 : 0));
  }

  /**
   * The start of a row: false, with the row counted as skipped, when the cell is missing or (with
   * `skipFlagged`) an earlier screening rule has already flagged it.
   */
  admit(batch: Batch, i: number, raw: number, stats: RuleStats): boolean {
    const label = QUANTITY_INFO[this.spec.quantity].label;
    if (!Number.isFinite(raw)) {
      stats.skip(`${label} missing`);
      return false;
    }
    if (this.skipFlagged && isUnusable(batch, this.spec.quantity, i)) {
      stats.skip(`${label} already flagged by an earlier screening rule`);
      return false;
    }
    return true;
  }

  /** Counts the row as checked and judged, then decides it (see `decide`). */
  judge(stats: RuleStats, raw: number, declaredLog: number, e: Expectations): number {
    stats.checked++;
    this.judged++;
    return this.decide(raw, declaredLog, e);
  }

  /** Flags the cell and, while the buffer has room, keeps its row finding (see `rowFinding`). */
  report(batch: Batch, i: number, raw: number, declaredLog: number, k: number, e: Expectations, basisText: (j: number) => string): void {
    if (this.flag(batch, i, k)) this.keep(this.rowFinding(batch, i, raw, declaredLog, k, e, basisText));
  }

  /** The row fitted a reading, but another cell of the row would explain it as well: the rule stays silent. */
  ambiguous(): void {
    this.ambiguousRows++;
  }

  /** log10 canonical of the cell as declared; `canonicalLog` is used when the declared unit is no reading. */
  declaredLog(raw: number, canonicalLog: number): number {
    return this.declaredIndex >= 0 ? readingLog(this.spec.readings[this.declaredIndex], raw) : canonicalLog;
  }

  /** Records where the batch came from, so column findings name the input and column. */
  begin(batch: Batch, column: string): void {
    this.input = batch.input;
    this.column = column;
    this.seen = true;
  }

  /** What `finish` and `summary` need of the rows seen or absorbed, as plain data (see RangeState). */
  save(): ScreenState {
    return {
      seen: this.seen,
      input: this.input,
      column: this.column,
      judged: this.judged,
      withExpectation: this.withExpectation,
      beyond3: this.beyond3,
      chance: this.chance,
      firedByUnit: this.firedByUnit.slice(),
      ambiguousRows: this.ambiguousRows,
      leftToShift: this.leftToShift,
      kept: this.buffer.save(),
    };
  }

  /**
   * Takes in the state of the rows that follow (see RuleRun.absorb). Every verdict was made in
   * `check` from the row and what was learned from the sample, so the counts add up and the
   * listed findings follow on, up to the cap, as one pass lists them.
   */
  absorb(s: ScreenState, shift: RowShift): void {
    if (s.seen && !this.seen) {
      this.input = s.input;
      this.column = s.column;
      this.seen = true;
    }
    this.judged += s.judged;
    this.withExpectation += s.withExpectation;
    this.beyond3 += s.beyond3;
    this.chance += s.chance;
    for (let k = 0; k < this.firedByUnit.length; k++) {
      this.firedByUnit[k] += s.firedByUnit[k];
      this.fired += s.firedByUnit[k];
    }
    this.ambiguousRows += s.ambiguousRows;
    this.leftToShift += s.leftToShift;
    this.buffer.absorb(s.kept, shift);
  }

  private plausible(k: number, lg: number): boolean {
    const r = this.spec.readings[k];
    return lg >= (r.plausibleMin ?? this.spec.plausibleMin) && lg <= (r.plausibleMax ?? this.spec.plausibleMax);
  }

  /**
   * The reading that explains the cell, or -1.
   *
   * With expectations (what the row's other values imply, each with its sigma): every plausible
   * reading k gets the Gaussian log-likelihood -sum_j (x_k - e_j)^2 / (2 s_j^2); the most probable
   * one is suggested when it is at least minLikelihoodRatio times more probable than the declared
   * reading. Where the declared value is one stars can have, the suggestion must also fit every
   * expectation within acceptSigma, and the declared value miss by minMissDex (heavy tails of real
   * catalogs, which a Gaussian does not have, make odd stars look like slips otherwise). A declared
   * value no star can have is explained by the most probable stellar reading however well it fits.
   *
   * Without expectations, only a declared value no star can have is judged, and the plausible
   * reading nearest the column's own values (their median and spread, see `learnPrior`) is taken.
   */
  decide(raw: number, declaredLog: number, e: Expectations): number {
    const { readings } = this.spec;
    this.bestDist = NaN;
    this.log10Ratio = NaN;
    this.runnerUp = -1;
    this.runnerUpLog10Ratio = NaN;
    const declaredPlausible = Number.isFinite(declaredLog) && declaredLog >= this.spec.plausibleMin && declaredLog <= this.spec.plausibleMax;
    if (e.n > 0) {
      this.withExpectation++;
      if (Number.isFinite(declaredLog) && Math.abs(declaredLog - e.value[0]) > 3 * e.sigma[0]) this.beyond3++;
      let w = 0;
      for (let j = 0; j < e.n; j++) w += 1 / (e.sigma[j] * e.sigma[j]);
      let best = -1;
      let bestChi = Infinity;
      let second = -1;
      let secondChi = Infinity;
      for (let k = 0; k < readings.length; k++) {
        if (k === this.declaredIndex) continue;
        const lg = readingLog(readings[k], raw);
        // A reading no star can have is never the explanation, however well it matches an
        // expectation that another broken cell in the row may have thrown off.
        if (!this.plausible(k, lg)) continue;
        if (declaredPlausible) {
          // Chance: the probability that Gaussian residuals of a right declared value would make
          // this reading minLikelihoodRatio times more probable (one combined expectation).
          const delta = Math.abs(lg - declaredLog) * Math.sqrt(w);
          const zc = (this.minLog10Ratio * Math.LN10) / delta + delta / 2;
          if (zc < CHANCE_Z_MAX) this.chance += normalUpperTail(zc);
        }
        const c = chiSquare(lg, e);
        if (c < bestChi) {
          second = best;
          secondChi = bestChi;
          bestChi = c;
          best = k;
        } else if (c < secondChi) {
          second = k;
          secondChi = c;
        }
      }
      if (best < 0) return -1;
      const lg = readingLog(readings[best], raw);
      const log10Ratio = Number.isFinite(declaredLog) ? log10GaussianRatio(lg, declaredLog, e.value, e.sigma, e.n) : Infinity;
      if (!(log10Ratio >= this.minLog10Ratio)) return -1;
      if (declaredPlausible) {
        let declaredDist = Infinity;
        for (let j = 0; j < e.n; j++) {
          if (!(Math.abs(lg - e.value[j]) <= this.acceptSigma * e.sigma[j])) return -1;
          declaredDist = Math.min(declaredDist, Math.abs(declaredLog - e.value[j]));
        }
        if (declaredDist < (e.n === 1 ? this.minMissSingle : this.minMiss)) return -1;
      }
      // A decimal point moved by one place that fits clearly better is left to decimal-shift, unless
      // the reading is the column's habit (a column that mixes units says which).
      if (this.shiftable && Number.isFinite(declaredLog) && !this.isHabit(best) && shiftFitsBetter(lg, declaredLog, e, this.acceptSigma)) {
        this.leftToShift++;
        return -1;
      }
      this.bestDist = Math.abs(lg - e.value[0]);
      this.log10Ratio = log10Ratio;
      if (second >= 0) {
        this.runnerUp = second;
        this.runnerUpLog10Ratio = (secondChi - bestChi) / (2 * Math.LN10);
      }
      return best;
    }
    if (declaredPlausible) return -1;
    const center = this.priorCenter;
    const sigma = this.priorSigma;
    let best = -1;
    let bestScore = Infinity;
    let second = -1;
    let secondScore = Infinity;
    for (let k = 0; k < readings.length; k++) {
      if (k === this.declaredIndex) continue;
      const lg = readingLog(readings[k], raw);
      if (!this.plausible(k, lg)) continue;
      // Without a column distribution: the first plausible reading in list order, or the one
      // nearest the quantity's typical value.
      const score = Number.isFinite(center) ? ((lg - center) / sigma) ** 2 : this.spec.typicalLog !== undefined ? Math.abs(lg - this.spec.typicalLog) : k;
      if (score < bestScore) {
        second = best;
        secondScore = bestScore;
        bestScore = score;
        best = k;
      } else if (score < secondScore) {
        second = k;
        secondScore = score;
      }
    }
    this.log10Ratio = best >= 0 ? Infinity : NaN;
    if (best >= 0 && second >= 0 && Number.isFinite(center)) {
      this.runnerUp = second;
      this.runnerUpLog10Ratio = (secondScore - bestScore) / (2 * Math.LN10);
    }
    return best;
  }

  /**
   * Whether reading k is the column's habit: as learned from the sample, or, for the screen that
   * judges the sample itself, whether the sample rows before have chosen it often (columnHabit).
   */
  private isHabit(k: number): boolean {
    return this.habit ? this.habit[k] === 1 : columnHabit(this.firedByUnit[k], this.judged);
  }

  /**
   * Median and robust spread (1.4826 x MAD, at least 0.5 dex) of the declared values of the
   * sample that stars can have, in log10 canonical units: what "a value of this column" looks
   * like. NaN with fewer than 20 such values.
   */
  private learnPrior(sample: Batch): void {
    const col = sample.quantities[this.spec.quantity];
    if (!col) return;
    const logs = new Float64Array(sample.length);
    let n = 0;
    for (let i = 0; i < sample.length; i++) {
      const lg = this.declaredLog(col.raw[i], this.spec.canonicalIsLog ? col.value[i] : Math.log10(col.value[i]));
      if (lg >= this.spec.plausibleMin && lg <= this.spec.plausibleMax) logs[n++] = lg;
    }
    if (n < COLUMN_PRIOR_MIN_ROWS) return;
    const a = logs.subarray(0, n).sort();
    const med = a[n >> 1];
    for (let i = 0; i < n; i++) a[i] = Math.abs(a[i] - med);
    a.sort();
    this.priorCenter = med;
    this.priorSigma = Math.max(COLUMN_PRIOR_MIN_SIGMA, 1.4826 * a[n >> 1]);
  }

  /**
   * Counts a flagged cell and marks it unusable for the judging rules. True when its row finding
   * should be made (the buffer has room), so a million-row slip builds no million findings.
   */
  flag(batch: Batch, i: number, k: number): boolean {
    this.fired++;
    this.firedByUnit[k]++;
    markUnusable(batch, this.spec.quantity, i);
    return !this.probing && !this.buffer.full;
  }

  /**
   * The row finding for a flagged cell: the likely unit, the corrected value and what the row
   * implied. `basisText(j)` words expectation j (j = -1: the row had none, only the plausible range).
   */
  rowFinding(batch: Batch, i: number, raw: number, declaredLog: number, k: number, e: Expectations, basisText: (j: number) => string): Finding {
    const { spec, acceptSigma, declaredUnit } = this;
    const reading = spec.readings[k];
    const suggestedLog = readingLog(reading, raw);
    const expected = e.n > 0 ? e.value[0] : NaN;
    const sigma = e.n > 0 ? e.sigma[0] : NaN;
    const asLinear = (lg: number) => (spec.canonicalIsLog ? round6(lg) : round6(Math.pow(10, lg))) ?? undefined;
    const declaredIsLog = declaredUnit.startsWith('log');
    const asDeclared = Number.isFinite(declaredLog)
      ? `as ${declaredUnit} it is ${spec.symbol} = ${fmt(declaredLog, 3)}`
      : `it cannot be a linear ${spec.label}`;
    const parts: string[] = [];
    for (let j = 0; j < e.n; j++) parts.push(`${basisText(j)} gives ${spec.symbol} = ${fmt(e.value[j], 3)}`);
    const implied = e.n > 0 ? parts.join(' and ') : `${basisText(-1)} gives ${spec.symbol} = a stellar value`;
    const suggestedValue = spec.canonicalIsLog || declaredIsLog ? suggestedLog : Math.pow(10, suggestedLog);
    const ratio = this.log10Ratio;
    const evidence =
      e.n > 0
        ? Number.isFinite(ratio)
          ? `; given the row's other values that reading is ${timesText(ratio)} more probable than ${declaredUnit}`
          : `; no star can have the value as ${declaredUnit}`
        : this.runnerUp >= 0 && Number.isFinite(this.runnerUpLog10Ratio)
          ? `; of the readings stars can have it is the nearest to the column's other values (${timesText(this.runnerUpLog10Ratio)} more probable than ${spec.readings[this.runnerUp].unit})`
          : '';
    return rowFinding(batch, i, {
      rule: spec.id,
      severity: 'error',
      columns: [this.column],
      values: {
        [this.column]: raw,
        likelyUnit: reading.unit,
        [spec.expectedKey]: round6(expected),
        likelihoodRatioLog10: Number.isFinite(ratio) ? round6(ratio) : null,
        runnerUpUnit: this.runnerUp >= 0 ? spec.readings[this.runnerUp].unit : null,
        runnerUpRatioLog10: Number.isFinite(this.runnerUpLog10Ratio) ? round6(this.runnerUpLog10Ratio) : null,
      },
      expected: Number.isFinite(expected)
        ? { value: asLinear(expected), min: asLinear(expected - acceptSigma * sigma), max: asLinear(expected + acceptSigma * sigma), unit: spec.canonicalUnit }
        : null,
      message: `${this.column} = ${fmt(raw)} looks like ${reading.unit}, not ${declaredUnit}: ${asDeclared}, but ${implied}; read as ${reading.unit} it is ${spec.describe(suggestedLog)}${Number.isFinite(this.bestDist) ? ` (${fmt(this.bestDist, 2)} dex away)` : ''}${evidence}`,
      suggestion: {
        column: this.column,
        value: round6(suggestedValue) ?? suggestedValue,
        unit: spec.canonicalIsLog ? spec.canonicalUnit : declaredIsLog ? `log(${spec.canonicalUnit})` : spec.canonicalUnit,
        text: `${spec.describe(suggestedLog)} (the value read as ${reading.unit})`,
      },
    });
  }

  keep(f: Finding): void {
    this.buffer.push(f);
  }

  /** One column finding when most judged rows are in another unit; else the buffered rows. */
  finish(out: FindingSink): void {
    const { spec, column, input, declaredUnit, fired, judged } = this;
    const { readings } = spec;
    if (judged >= COLUMN_VERDICT_MIN_ROWS && fired / judged > this.columnFraction) {
      let top = 0;
      for (let k = 1; k < readings.length; k++) if (this.firedByUnit[k] > this.firedByUnit[top]) top = k;
      const unit = readings[top].unit;
      out.push(
        columnFinding({
          input,
          rule: spec.id,
          severity: 'error',
          columns: [column],
          values: { rowsJudged: judged, rowsInOtherUnit: fired, likelyUnit: unit, rowsLikelyUnit: this.firedByUnit[top] },
          message: `column ${column} is declared ${declaredUnit}, but ${fired} of ${judged} judged rows fit another unit far better (${this.firedByUnit[top]} of them ${unit}): the column as a whole is likely in ${unit}`,
          suggestion: { column, value: 1, unit, text: `declare the column's unit as ${unit} (e.g. --unit ${column}=${unit})` },
        }),
      );
      this.buffer.close();
      return;
    }
    const listed = this.buffer.length;
    this.buffer.drain((f, _tag, shift) => out.push(shift.rows !== 0 || shift.lines !== 0 ? shiftFinding(f, shift) : f));
    if (fired > listed) {
      out.push(
        columnFinding({
          input,
          rule: spec.id,
          severity: 'error',
          columns: [column],
          values: { rowsInOtherUnit: fired, rowsListed: listed },
          message: `${fired} rows of ${column} look like another unit; the first ${listed} are listed, ${fired - listed} more are not`,
        }),
      );
    }
  }

  summary(): Record<string, unknown> {
    const { readings } = this.spec;
    const gauss3 = 2 * normalUpperTail(3);
    return {
      declaredUnit: this.declaredUnit,
      rowsJudged: this.judged,
      rowsInOtherUnit: this.fired,
      byLikelyUnit: Object.fromEntries(readings.map((r, k) => [r.unit, this.firedByUnit[k]]).filter(([, n]) => (n as number) > 0)),
      minLikelihoodRatio: round6(10 ** this.minLog10Ratio),
      ...(this.shiftable ? { rowsLeftToDecimalShift: this.leftToShift } : {}),
      // If every declared value were right and the residuals Gaussian with the stated sigmas, this
      // many rows would reach the ratio by chance (before the acceptSigma and minMiss guards).
      expectedByChance: round6(this.chance),
      residualTails: {
        judgedWithExpectation: this.withExpectation,
        beyondThreeSigma: this.beyond3,
        fractionBeyondThreeSigma: this.withExpectation ? round6(this.beyond3 / this.withExpectation) : null,
        gaussianFraction: round6(gauss3),
        heavyTailed: this.withExpectation >= 100 && poissonUpperTail(this.beyond3, this.withExpectation * gauss3) < 1e-3,
      },
    };
  }
}

/** "10^1467 times" for huge ratios, "3400 times" for moderate ones. */
function timesText(log10Ratio: number): string {
  if (!Number.isFinite(log10Ratio)) return 'infinitely many times';
  if (log10Ratio < 6) return `${fmt(10 ** log10Ratio, 2)} times`;
  return `about 10^${Math.floor(log10Ratio)} times`;
}

/**
 * Another cell of the relation behind a single expectation. When that cell, read in one of its own
 * other units, would make the row consistent with the judged cell as written, the row cannot tell
 * which of the two slipped, and the screen stays silent rather than guess.
 */
export class OtherCell {
  private readonly declaredIndex: number;
  constructor(
    private readonly readings: readonly UnitReading[],
    declaredUnit: string | undefined,
  ) {
    this.declaredIndex = readings.findIndex((r) => r.unit === (declaredUnit ?? readings[0].unit));
  }

  /**
   * `coef` is d(expectation)/d(log of this cell); `raw` the other cell as written and `canonicalLog`
   * its value (log10 canonical) as the row holds it. Only the primary expectation is used.
   */
  explains(declaredLog: number, e: Expectations, acceptSigma: number, coef: number, raw: number, canonicalLog: number): boolean {
    if (e.n !== 1 || !Number.isFinite(raw) || !Number.isFinite(canonicalLog) || !Number.isFinite(declaredLog)) return false;
    const tol = acceptSigma * e.sigma[0];
    for (let k = 0; k < this.readings.length; k++) {
      if (k === this.declaredIndex) continue;
      const lg = readingLog(this.readings[k], raw);
      if (!Number.isFinite(lg)) continue;
      if (Math.abs(declaredLog - (e.value[0] + coef * (lg - canonicalLog))) <= tol) return true;
    }
    return false;
  }
}

/**
 * The run of a screen rule: it learns from the input's sample (see UnitMixupScreen.learn), judges
 * each batch with `loop`, and finishes, sums up, saves and absorbs through the screen.
 */
export function screenRun(screen: UnitMixupScreen, loop: ScreenLoop, sample: Batch | undefined, summary: () => Record<string, unknown> = () => screen.summary()): RuleRun {
  screen.learn(sample, loop);
  return {
    check(batch, _out, stats) {
      screen.learn(batch, loop);
      loop(screen, batch, stats);
    },
    finish: (out) => screen.finish(out),
    summary,
    save: () => screen.save(),
    absorb: (state, shift) => screen.absorb(state as ScreenState, shift),
  };
}
