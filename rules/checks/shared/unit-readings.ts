/**
 * What every unit mix-up screen shares: the readings a cell can have, the decision which reading
 * fits the rest of the row best, and the whole-column verdict with its capped row buffer. Each rule
 * keeps its own loop over the batch and its own expectations (Stefan-Boltzmann, gravity, a
 * mass-luminosity relation); this module never knows which quantity it judges beyond the spec.
 */
import { COLUMN_VERDICT_MIN_ROWS, columnFinding, fmt, round6, rowFinding } from '../../engine/findings.js';
import type { NumericQuantity } from '../../engine/quantities.js';
import { QUANTITY_INFO } from '../../engine/quantities.js';
import { isUnusable, markUnusable } from '../../engine/usable.js';
import type { Batch, Finding, FindingSink, ParamSpec, ParamValues, QuantityColumn, RuleStats } from '../../engine/types.js';
import { L_SUN_W } from '../../physics/constants.js';
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
}

/** Parameters every unit mix-up screen has; a rule may add its own after them. */
export const MIXUP_PARAMS: readonly ParamSpec[] = [
  { name: 'fireSigma', type: 'number', default: 5, min: 1, description: 'The declared reading must miss the star by more than this many sigma.' },
  { name: 'acceptSigma', type: 'number', default: 3, min: 0.5, description: 'The suggested reading must fit within this many sigma.' },
  { name: 'minGainDex', type: 'number', default: 0.5, min: 0, description: 'The suggested reading must fit better by at least this many dex.' },
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
const MAX_BASES = 4;

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

/**
 * The decision and the bookkeeping of one unit mix-up screen over one input: which reading fits,
 * the cell marked unusable, counts per likely unit, the capped buffer of row findings and the
 * column verdict at the end.
 */
export class UnitMixupScreen {
  readonly fireSigma: number;
  readonly acceptSigma: number;
  readonly minGain: number;
  readonly columnFraction: number;
  /** See MIN_MISS_PARAMS; 0 for a rule without those parameters. */
  readonly minMiss: number;
  readonly minMissSingle: number;
  readonly declaredUnit: string;
  /** Index of the declared unit among the readings, -1 when it is none of them. */
  readonly declaredIndex: number;
  /** Set by `decide`: distance of the chosen reading from the primary expectation (dex; NaN without one). */
  bestDist = NaN;
  judged = 0;
  fired = 0;
  private readonly firedByUnit: number[];
  private readonly buffer: Finding[] = [];
  private input = 0;
  private column = '';

  constructor(
    readonly spec: UnitMixupSpec,
    params: ParamValues,
    declaredUnit: string | undefined,
    private readonly skipFlagged = true,
  ) {
    this.fireSigma = params.fireSigma as number;
    this.acceptSigma = params.acceptSigma as number;
    this.minGain = params.minGainDex as number;
    this.columnFraction = params.columnFraction as number;
    this.minMiss = typeof params.minMissDex === 'number' ? params.minMissDex : 0;
    this.minMissSingle = typeof params.minMissSingleDex === 'number' ? params.minMissSingleDex : 0;
    this.declaredUnit = declaredUnit ?? spec.readings[0].unit;
    this.declaredIndex = spec.readings.findIndex((r) => r.unit === this.declaredUnit);
    this.firedByUnit = new Array<number>(spec.readings.length).fill(0);
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

  /** log10 canonical of the cell as declared; `canonicalLog` is used when the declared unit is no reading. */
  declaredLog(raw: number, canonicalLog: number): number {
    return this.declaredIndex >= 0 ? readingLog(this.spec.readings[this.declaredIndex], raw) : canonicalLog;
  }

  /** Records where the batch came from, so column findings name the input and column. */
  begin(batch: Batch, column: string): void {
    this.input = batch.input;
    this.column = column;
  }

  /**
   * The reading that explains the cell, or -1. With expectations: the declared reading must miss
   * every one of them by more than fireSigma, and the chosen one fit every one within acceptSigma
   * and be at least minGain dex closer. Without: only a declared value no star can have is judged,
   * and a reading inside the plausible range is taken.
   */
  decide(raw: number, declaredLog: number, e: Expectations): number {
    const { readings } = this.spec;
    this.bestDist = NaN;
    if (e.n > 0) {
      let declaredDist = Infinity;
      if (Number.isFinite(declaredLog)) {
        for (let j = 0; j < e.n; j++) {
          const d = Math.abs(declaredLog - e.value[j]);
          if (d <= this.fireSigma * e.sigma[j]) return -1;
          if (d < declaredDist) declaredDist = d;
        }
        if (declaredDist < (e.n === 1 ? this.minMissSingle : this.minMiss) && declaredLog >= this.spec.plausibleMin && declaredLog <= this.spec.plausibleMax) return -1;
      }
      let best = -1;
      let bestZ = Infinity;
      for (let k = 0; k < readings.length; k++) {
        if (k === this.declaredIndex) continue;
        const lg = readingLog(readings[k], raw);
        // A reading no star can have is never the explanation, however well it matches an
        // expectation that another broken cell in the row may have thrown off.
        if (!(lg >= (readings[k].plausibleMin ?? this.spec.plausibleMin) && lg <= (readings[k].plausibleMax ?? this.spec.plausibleMax))) continue;
        let z = 0;
        for (let j = 0; j < e.n; j++) z = Math.max(z, Math.abs(lg - e.value[j]) / e.sigma[j]);
        if (z < bestZ) {
          bestZ = z;
          best = k;
        }
      }
      if (best < 0) return -1;
      const lg = readingLog(readings[best], raw);
      let worst = 0;
      for (let j = 0; j < e.n; j++) {
        const d = Math.abs(lg - e.value[j]);
        if (!(d <= this.acceptSigma * e.sigma[j])) return -1;
        if (d > worst) worst = d;
      }
      if (declaredDist - worst < this.minGain) return -1;
      this.bestDist = Math.abs(lg - e.value[0]);
      return best;
    }
    const { plausibleMin, plausibleMax, typicalLog } = this.spec;
    if (declaredLog >= plausibleMin && declaredLog <= plausibleMax) return -1;
    let best = -1;
    let bestGap = Infinity;
    for (let k = 0; k < readings.length; k++) {
      if (k === this.declaredIndex) continue;
      const r = readings[k];
      const lg = readingLog(r, raw);
      if (!(lg >= (r.plausibleMin ?? plausibleMin) && lg <= (r.plausibleMax ?? plausibleMax))) continue;
      if (typicalLog === undefined) return k;
      const gap = Math.abs(lg - typicalLog);
      if (gap < bestGap) {
        bestGap = gap;
        best = k;
      }
    }
    return best;
  }

  /**
   * Counts a flagged cell and marks it unusable for the judging rules. True when its row finding
   * should be made (the buffer has room), so a million-row slip builds no million findings.
   */
  flag(batch: Batch, i: number, k: number): boolean {
    this.fired++;
    this.firedByUnit[k]++;
    markUnusable(batch, this.spec.quantity, i);
    return this.buffer.length < ROW_BUFFER_CAP;
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
    return rowFinding(batch, i, {
      rule: spec.id,
      severity: 'error',
      columns: [this.column],
      values: { [this.column]: raw, likelyUnit: reading.unit, [spec.expectedKey]: round6(expected) },
      expected: Number.isFinite(expected)
        ? { value: asLinear(expected), min: asLinear(expected - acceptSigma * sigma), max: asLinear(expected + acceptSigma * sigma), unit: spec.canonicalUnit }
        : null,
      message: `${this.column} = ${fmt(raw)} looks like ${reading.unit}, not ${declaredUnit}: ${asDeclared}, but ${implied}; read as ${reading.unit} it is ${spec.describe(suggestedLog)}${Number.isFinite(this.bestDist) ? ` (${fmt(this.bestDist, 2)} dex away)` : ''}`,
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
      return;
    }
    for (const f of this.buffer) out.push(f);
    if (fired > this.buffer.length) {
      out.push(
        columnFinding({
          input,
          rule: spec.id,
          severity: 'error',
          columns: [column],
          values: { rowsInOtherUnit: fired, rowsListed: this.buffer.length },
          message: `${fired} rows of ${column} look like another unit; the first ${this.buffer.length} are listed, ${fired - this.buffer.length} more are not`,
        }),
      );
    }
  }

  summary(): Record<string, unknown> {
    const { readings } = this.spec;
    return {
      declaredUnit: this.declaredUnit,
      rowsJudged: this.judged,
      rowsInOtherUnit: this.fired,
      byLikelyUnit: Object.fromEntries(readings.map((r, k) => [r.unit, this.firedByUnit[k]]).filter(([, n]) => (n as number) > 0)),
    };
  }
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
