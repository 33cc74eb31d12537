/**
 * Builds the demo catalogs of the Thistlewood Stellar Census (an invented survey), data release 1:
 * a CSV, the same table as an Arrow IPC file, and a ground-truth file listing every planted error.
 * The Arrow file holds what a reader of the CSV gets; only the text-level slips (text in a numeric
 * cell, a record cut short) differ, as nulls there (see CSV_ONLY_NOTE).
 *
 *   npx tsx sample-catalogs/make-samples.ts                      # the committed 3000-row sample
 *   npx tsx sample-catalogs/make-samples.ts --rows 1000000 --seed 7 --out /tmp/tw1m --no-plant
 *
 * Everything follows from the seed. Rows are made in blocks of 3000 (the composition of the
 * default sample, shuffled), so catalogs of any size stream out with bounded memory; with planting
 * on, each block gets its own share of planted errors.
 */
import { closeSync, mkdirSync, openSync, renameSync, writeSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import {
  Field,
  Float64,
  RecordBatch,
  RecordBatchFileWriter,
  Schema,
  Struct,
  Utf8,
  makeData,
  vectorFromArray,
  type Data,
} from 'apache-arrow';
import { L_SUN_W, M_SUN_KG, R_SUN_M } from '../rules/physics/constants.js';
import { eddingtonLuminosity } from '../rules/physics/eddington.js';
import { EKER_2018 } from '../rules/physics/mass-luminosity.js';
import {
  logLuminosityFromRadiusTeff,
  loggFromMassRadius,
  luminosityFromRadiusTeff,
  mbolFromLuminosity,
  teffFromLuminosityRadius,
} from '../rules/physics/stellar.js';
import { toutZamsLuminosity, toutZamsRadius } from '../rules/physics/zams.js';

export const SURVEY = 'Thistlewood Stellar Census';
export const RELEASE = 'DR1';
export const DEFAULT_ROWS = 3000;
export const DEFAULT_SEED = 20261201;
const HERE = dirname(fileURLToPath(import.meta.url));
export const DEFAULT_PREFIX = resolve(HERE, 'thistlewood-dr1');

export const COLUMNS = [
  'star_id',
  'mass_Msun',
  'e_mass_Msun',
  'lum_Lsun',
  'e_lum_Lsun',
  'radius_Rsun',
  'e_radius_Rsun',
  'teff_K',
  'e_teff_K',
  'logg',
  'e_logg',
  'feh',
  'parallax_mas',
  'e_parallax_mas',
  'dist_pc',
  'mbol',
  'stage',
] as const;
/** The numeric columns, in file order; index into a row's value array. */
export const NUMERIC = COLUMNS.slice(1, COLUMNS.length - 1) as readonly string[];
const C = {
  mass: 0,
  eMass: 1,
  lum: 2,
  eLum: 3,
  radius: 4,
  eRadius: 5,
  teff: 6,
  eTeff: 7,
  logg: 8,
  eLogg: 9,
  feh: 10,
  plx: 11,
  ePlx: 12,
  dist: 13,
  mbol: 14,
} as const;

// ---------------------------------------------------------------------------------------------
// Random numbers. Our own generator so the output does not depend on the runtime's Math.random.

export class Rng {
  private state: number;
  private spare = NaN;
  constructor(seed: number) {
    this.state = seed >>> 0;
  }
  /** mulberry32: uniform in [0, 1). */
  next(): number {
    this.state = (this.state + 0x6d2b79f5) >>> 0;
    let t = this.state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  }
  uniform(a: number, b: number): number {
    return a + (b - a) * this.next();
  }
  logUniform(a: number, b: number): number {
    return a * Math.pow(b / a, this.next());
  }
  /** Box-Muller; the second deviate of each pair is kept for the next call. */
  normal(mean: number, sd: number): number {
    if (!Number.isNaN(this.spare)) {
      const z = this.spare;
      this.spare = NaN;
      return mean + sd * z;
    }
    const u = 1 - this.next();
    const v = this.next();
    const r = Math.sqrt(-2 * Math.log(u));
    this.spare = r * Math.sin(2 * Math.PI * v);
    return mean + sd * r * Math.cos(2 * Math.PI * v);
  }
  int(n: number): number {
    return Math.floor(this.next() * n);
  }
  shuffle<T>(a: T[]): T[] {
    for (let i = a.length - 1; i > 0; i--) {
      const j = this.int(i + 1);
      const t = a[i];
      a[i] = a[j];
      a[j] = t;
    }
    return a;
  }
}

// ---------------------------------------------------------------------------------------------
// Numbers as the files hold them. Every value goes through one of these before any check, so the
// checks below judge exactly what a reader of the CSV or the Arrow file will see.

const POW10 = Array.from({ length: 23 }, (_, k) => Number(`1e${k}`));

/**
 * To `digits` significant digits: the double nearest the rounded decimal, as Number(toPrecision)
 * would give. With an integer mantissa and an exact power of ten, one IEEE multiply or divide is
 * correctly rounded, hence already that double, and far cheaper than formatting and parsing.
 * +0 folds -0 away so CSV "0" and the Arrow value agree.
 */
export function sig(x: number, digits: number): number {
  if (x === 0 || !Number.isFinite(x)) return x + 0;
  const k = digits - 1 - Math.floor(Math.log10(Math.abs(x)));
  if (k >= 0 && k <= 22) {
    const m = Math.round(x * POW10[k]);
    // Near a power of ten log10 can land one digit off; the slow path settles it.
    if (Math.abs(m) >= POW10[digits - 1] && Math.abs(m) < POW10[digits]) return m / POW10[k] + 0;
  } else if (k < 0 && k >= -22) {
    const m = Math.round(x / POW10[-k]);
    if (Math.abs(m) >= POW10[digits - 1] && Math.abs(m) < POW10[digits]) return m * POW10[-k] + 0;
  }
  return Number(x.toPrecision(digits)) + 0;
}
const val = (x: number) => sig(x, 5);
const err = (x: number) => sig(x, 2);
/** Magnitudes to the millimag, as catalogs print them; +0 folds -0 away. */
const mag = (x: number) => Number(x.toFixed(3)) + 0;
/** Shortest text that reads back as exactly this double; NaN is an empty cell. */
export function cell(v: number): string {
  return Number.isNaN(v) ? '' : String(v);
}

/** One CSV record: the id, the numeric cells (or the text planted in one), the stage; a ragged row is cut short. */
function csvLine(id: string, s: Star): string {
  const fields = [id];
  for (let c = 0; c < s.v.length; c++) fields.push(s.csvText?.[c] ?? cell(s.v[c]));
  fields.push(s.stage);
  return (s.csvDropped ? fields.slice(0, fields.length - s.csvDropped) : fields).join(',');
}

// ---------------------------------------------------------------------------------------------
// The population.

export type Stage = 'MS' | 'giant' | 'WD';
type Kind = 'ms' | 'vms' | 'giant' | 'wd';

interface Star {
  stage: Stage;
  kind: Kind;
  /** Relative error draws, kept so a planted change can re-derive an error the same way. */
  relMass: number;
  relLum: number;
  teffDraw: number;
  /** Values as written (rounded). NaN is an empty cell (in the Arrow file, a null). */
  v: Float64Array;
  /** A planted copy of an earlier row of the block carries that row's id (its index in the block). */
  idIndex?: number;
  /** Text-level slips only the CSV holds: cells written as text (by numeric column) ... */
  csvText?: Record<number, string>;
  /** ... and fields missing at the end of the record (a ragged row). */
  csvDropped?: number;
}

/** Composition of one full block; smaller blocks are scaled from it. */
const BLOCK = { ms: 2620, vms: 10, giant: 250, wd: 120 } as const;
const BLOCK_ROWS = BLOCK.ms + BLOCK.vms + BLOCK.giant + BLOCK.wd;

const LEDD_X0 = eddingtonLuminosity(1, 0);
const LEDD_X07 = eddingtonLuminosity(1, 0.7);

function teffError(teff: number, draw: number): number {
  // Spectroscopic Teff errors are roughly constant in K for cool stars and scale with Teff for hot ones.
  return teff > 10_000 ? 0.02 * teff : 50 + 100 * draw;
}

/** Rounded as the files hold them, so every later check sees what a reader will see. */
function fill(v: Float64Array, m: number, l: number, r: number, t: number, g: number, feh: number, s: ErrDraws): Float64Array {
  v[C.mass] = val(m);
  v[C.eMass] = err(s.relMass * m);
  v[C.lum] = val(l);
  v[C.eLum] = err(s.relLum * l);
  v[C.radius] = val(r);
  v[C.eRadius] = err(s.relRadius * r);
  v[C.teff] = val(t);
  v[C.eTeff] = err(teffError(t, s.teffDraw));
  v[C.logg] = val(g);
  v[C.eLogg] = err(s.logg);
  v[C.feh] = Number.isNaN(feh) ? NaN : Number(feh.toFixed(2)) + 0;
  v[C.mbol] = mag(mbolFromLuminosity(v[C.lum]));
  return v;
}

/**
 * Parallax, its error and the distance 1000 / parallax, from their own stream so the stars
 * themselves do not depend on these columns. Distances are log-uniform in 5-2000 pc and parallax
 * errors 1-5 %, so every parallax is measured at 20 sigma or better and 1/parallax is a fair distance.
 */
function astrometry(v: Float64Array, rng: Rng): void {
  const d = rng.logUniform(5, 2000);
  const rel = rng.uniform(0.01, 0.05);
  v[C.plx] = val(1000 / d);
  v[C.ePlx] = err(rel * v[C.plx]);
  v[C.dist] = val(1000 / v[C.plx]);
}

interface ErrDraws {
  relMass: number;
  relLum: number;
  relRadius: number;
  teffDraw: number;
  logg: number;
}

function drawErrors(rng: Rng): ErrDraws {
  return {
    relMass: rng.uniform(0.03, 0.08),
    relLum: rng.uniform(0.05, 0.15),
    relRadius: rng.uniform(0.03, 0.06),
    teffDraw: rng.next(),
    logg: rng.uniform(0.05, 0.15),
  };
}

/** log10 L of the relation a clean main-sequence star was drawn from, at its listed mass. */
function relationLogL(m: number): { logL: number; eker: boolean } {
  const e = EKER_2018.logL(m);
  if (Number.isFinite(e)) return { logL: e, eker: true };
  return { logL: Math.log10(toutZamsLuminosity(m, 0.02)), eker: false };
}

/** Stays well inside the X = 0.7 Eddington limit even with every error against it. */
function comfortablySubEddington(v: Float64Array): boolean {
  return v[C.lum] + 3 * v[C.eLum] < 0.8 * LEDD_X07 * (v[C.mass] - 3 * v[C.eMass]);
}

function isFiniteAll(v: Float64Array, upto = C.eLogg): boolean {
  for (let i = 0; i <= upto; i++) if (!Number.isFinite(v[i])) return false;
  return true;
}

/**
 * A main-sequence star. Masses are log-uniform, so every part of the mass-luminosity diagram is
 * populated; L follows Eker 2018 inside its range with a bounded scatter, and the Tout ZAMS plus a
 * brightening offset outside it (both at Z = 0.02, the metallicity the rules' ZAMS uses), so a
 * clean star never looks like an outlier.
 */
function mainSequence(rng: Rng, kind: 'ms' | 'vms'): Star {
  for (let attempt = 0; ; attempt++) {
    if (attempt > 1000) throw new Error('could not draw a main-sequence star');
    const m = kind === 'vms' ? rng.logUniform(60, 100) : rng.logUniform(0.1, 60);
    const eker = EKER_2018.logL(m);
    const logL = Number.isFinite(eker)
      ? eker + rng.uniform(-0.12, 0.12)
      : Math.log10(toutZamsLuminosity(m, 0.02)) + rng.uniform(0, kind === 'vms' ? 0.2 : 0.25);
    const l = Math.pow(10, logL);
    const r = toutZamsRadius(m, 0.02) * rng.uniform(1.0, 1.3);
    const t = teffFromLuminosityRadius(l, r);
    const g = loggFromMassRadius(m, r);
    const feh = rng.normal(-0.1, 0.2);
    const e = drawErrors(rng);
    const v = fill(new Float64Array(NUMERIC.length), m, l, r, t, g, feh, e);
    if (!isFiniteAll(v)) continue;
    if (!(v[C.logg] >= 3.5 && v[C.logg] <= 5.5)) continue;
    if (!(v[C.teff] >= 2300 && v[C.teff] <= 50_000)) continue;
    const rel = relationLogL(v[C.mass]);
    const resid = Math.log10(v[C.lum]) - rel.logL;
    // Judged on the rounded values, so a mass rounded across a segment break cannot slip out.
    if (rel.eker ? Math.abs(resid) > 0.125 : resid < -0.005 || resid > 0.255) continue;
    if (!comfortablySubEddington(v)) continue;
    return { stage: 'MS', kind, relMass: e.relMass, relLum: e.relLum, teffDraw: e.teffDraw, v };
  }
}

/** A red giant: L from its radius and Teff, logg well below the main-sequence band. */
function giant(rng: Rng): Star {
  for (let attempt = 0; ; attempt++) {
    if (attempt > 1000) throw new Error('could not draw a giant');
    const m = rng.logUniform(0.9, 6);
    const r = rng.logUniform(8, 60);
    const t = rng.uniform(3900, 5200);
    const l = luminosityFromRadiusTeff(r, t);
    const g = loggFromMassRadius(m, r);
    const feh = rng.normal(-0.1, 0.2);
    const e = drawErrors(rng);
    const v = fill(new Float64Array(NUMERIC.length), m, l, r, t, g, feh, e);
    // Margin below 3.5 so a logg-based main-sequence gate never takes a giant for a dwarf.
    if (!(v[C.logg] <= 3.3)) continue;
    if (!comfortablySubEddington(v)) continue;
    return { stage: 'giant', kind: 'giant', relMass: e.relMass, relLum: e.relLum, teffDraw: e.teffDraw, v };
  }
}

/**
 * A white dwarf: masses clustered near 0.6 M_sun, radius shrinking with mass, logg 7.7-8.7. No
 * [Fe/H]: a white-dwarf atmosphere shows no primordial metallicity.
 */
function whiteDwarf(rng: Rng): Star {
  for (let attempt = 0; ; attempt++) {
    if (attempt > 1000) throw new Error('could not draw a white dwarf');
    const m = rng.normal(0.64, 0.12);
    if (!(m >= 0.5 && m <= 1.1)) continue;
    const r = Math.min(0.015, Math.max(0.008, (0.015 - (0.007 * (m - 0.5)) / 0.6) * rng.uniform(0.97, 1.03)));
    const t = rng.logUniform(6000, 40_000);
    const l = luminosityFromRadiusTeff(r, t);
    const g = loggFromMassRadius(m, r);
    const e = drawErrors(rng);
    const v = fill(new Float64Array(NUMERIC.length), m, l, r, t, g, NaN, e);
    if (!(v[C.logg] >= 7.7 && v[C.logg] <= 8.7)) continue;
    return { stage: 'WD', kind: 'wd', relMass: e.relMass, relLum: e.relLum, teffDraw: e.teffDraw, v };
  }
}

function composition(n: number): Record<Kind, number> {
  if (n === BLOCK_ROWS) return { ...BLOCK };
  const giantN = Math.round((BLOCK.giant * n) / BLOCK_ROWS);
  const wdN = Math.round((BLOCK.wd * n) / BLOCK_ROWS);
  const vmsN = Math.round((BLOCK.vms * n) / BLOCK_ROWS);
  return { ms: n - giantN - wdN - vmsN, vms: vmsN, giant: giantN, wd: wdN };
}

function makeBlock(rng: Rng, astroRng: Rng, n: number): Star[] {
  const comp = composition(n);
  const kinds: Kind[] = [];
  for (const k of ['ms', 'vms', 'giant', 'wd'] as const) for (let i = 0; i < comp[k]; i++) kinds.push(k);
  rng.shuffle(kinds);
  return kinds.map((k) => {
    const s = k === 'ms' || k === 'vms' ? mainSequence(rng, k) : k === 'giant' ? giant(rng) : whiteDwarf(rng);
    astrometry(s.v, astroRng);
    return s;
  });
}

// ---------------------------------------------------------------------------------------------
// Planted errors.

export type PlantKind =
  | 'watts'
  | 'erg'
  | 'log-in-linear'
  | 'super-eddington'
  | 'eddington-warning'
  | 'ml-faint'
  | 'ml-bright'
  | 'missing'
  | 'lum-times-ten'
  | 'mass-in-kg'
  | 'radius-in-km'
  | 'log-teff'
  | 'logg-si'
  | 'mass-radius-swap'
  | 'teff-off'
  | 'logg-off'
  | 'mbol-sign'
  | 'mbol-one-mag'
  | 'dist-in-kpc'
  | 'parallax-in-arcsec'
  | 'sentinel'
  | 'negative-error'
  | 'brown-dwarf-mass'
  | 'zero-distance'
  | 'same-id'
  | 'same-row'
  | 'conflicting-mass'
  | 'text-in-number'
  | 'ragged-row';

export interface Expectation {
  rule: string;
  severity: 'error' | 'warning' | 'note';
}

/** A finding for a whole column (or input) that the planted cells must give, such as a sentinel note. */
export interface ColumnExpectation extends Expectation {
  /** The column it names; absent for a note about the whole input. */
  column?: string;
}

/** A cell before and after planting; text for `star_id`, `stage` and text written in a numeric column. */
export interface CellChange {
  column: string;
  original: number | string | null;
  planted: number | string | null;
}

export interface PlantedEntry extends CellChange {
  row: number;
  id: string;
  kind: PlantKind;
  expect: Expectation[];
  alsoAllowed: string[];
  /** Column-scope findings this planted row must give (sentinel and duplicate counts). */
  expectColumn?: ColumnExpectation[];
  /** Cells that moved with the planted one (its error, or Teff kept on Stefan-Boltzmann). */
  alsoChanged?: CellChange[];
  /**
   * The duplicate kinds: the row was replaced by a copy of the earlier row `row`, id included;
   * `differs` lists the cells where the copy differs from that row (`original` is that row's value).
   */
  copyOf?: { row: number; differs: CellChange[] };
  /**
   * A text-level slip (text in a numeric cell, a ragged record) that only the CSV can hold. The
   * Arrow file holds what the CSV reader makes of the record (nulls), so there `expect` is not
   * found and the row has no findings at all.
   */
  csvOnly?: true;
  detail: string;
}

/** Per full block; the order is the order of choosing, most demanding first. */
export const PLANT_COUNTS: readonly [PlantKind, number][] = [
  ['super-eddington', 5],
  ['eddington-warning', 3],
  ['ml-bright', 6],
  ['ml-faint', 6],
  ['log-in-linear', 8],
  ['watts', 8],
  ['erg', 6],
  ['missing', 20],
  ['conflicting-mass', 2],
  ['same-row', 2],
  ['same-id', 2],
  ['mass-radius-swap', 3],
  ['brown-dwarf-mass', 2],
  ['lum-times-ten', 3],
  ['mass-in-kg', 3],
  ['radius-in-km', 3],
  ['log-teff', 3],
  ['logg-si', 3],
  ['teff-off', 4],
  ['logg-off', 4],
  ['mbol-sign', 3],
  ['mbol-one-mag', 3],
  ['dist-in-kpc', 3],
  ['parallax-in-arcsec', 2],
  ['zero-distance', 2],
  ['sentinel', 3],
  ['negative-error', 3],
  ['text-in-number', 3],
  ['ragged-row', 2],
];

/** Kinds whose slip only a text format can hold (see `csvOnly`). */
export const CSV_ONLY_KINDS: readonly PlantKind[] = ['text-in-number', 'ragged-row'];
export const CSV_ONLY_NOTE =
  'Entries with csvOnly are text-level slips (text in a numeric cell, a record cut short) that only the CSV can hold. The Arrow file holds what the CSV reader makes of those cells (nulls), so their expected findings appear in the CSV only, and the Arrow file has no finding on those rows; every other finding is the same in both.';

const UNIT_MIXUP: Expectation[] = [{ rule: 'luminosity-unit-mixup', severity: 'error' }];
/**
 * A mistyped mass also breaks logg = log(G M / R^2) (logg is the true star's), and a divisor near
 * 10 is a decimal slip in all but name; those rules may rightly speak up too.
 */
const WRONG_MASS_ALSO = ['mass-luminosity-outlier', 'surface-gravity-mismatch', 'decimal-shift'];

const LOG_LSUN_W = Math.log10(L_SUN_W);
const LOG_LSUN_ERG = LOG_LSUN_W + 7;

type Entry = Omit<PlantedEntry, 'row' | 'id' | 'copyOf'> & { copyOf?: { differs: CellChange[] } };

interface Planted {
  index: number;
  /** For the duplicate kinds: the index of the earlier row that was copied. */
  source: number;
  entry: Entry;
}

const cellValue = (x: number) => (Number.isNaN(x) ? null : x);

function change(column: number, original: number, planted: number | string): CellChange {
  return { column: NUMERIC[column], original: cellValue(original), planted: typeof planted === 'string' ? planted : cellValue(planted) };
}

/** The luminosity a cell would mean read in each wrong unit, in log L_sun. */
function otherReadings(x: number): number[] {
  const lin = x > 0 ? Math.log10(x) : NaN;
  return [lin - LOG_LSUN_W, lin - LOG_LSUN_ERG, x, x - LOG_LSUN_W, x - LOG_LSUN_ERG];
}

function distanceToInteger(x: number): number {
  return Math.abs(x - Math.round(x));
}

/** Where an attempt stands in its block; the duplicate kinds copy an earlier row and name it in `source`. */
interface BlockPick {
  stars: Star[];
  index: number;
  taken: Uint8Array;
  source: number;
}

type Attempt = (s: Star, rng: Rng, block: BlockPick) => Entry | null;

function unitSlip(kind: 'watts' | 'erg', factor: number, label: string): Attempt {
  return (s) => {
    const v = s.v;
    const l = val(v[C.lum] * factor);
    const e = err(v[C.eLum] * factor);
    const out: Entry = {
      kind,
      ...change(C.lum, v[C.lum], l),
      expect: UNIT_MIXUP,
      alsoAllowed: [],
      alsoChanged: [change(C.eLum, v[C.eLum], e)],
      detail: `luminosity and its error written in ${label} under the solar-units header (x ${factor.toExponential(3)})`,
    };
    v[C.lum] = l;
    v[C.eLum] = e;
    return out;
  };
}

const logInLinear: Attempt = (s) => {
  const v = s.v;
  const logL = Math.log10(v[C.lum]);
  // Unambiguous only well away from zero: near log L = 0 a log value is also a plausible linear one.
  if (!(logL > 1.0 || logL < -0.7)) return null;
  const x = val(logL);
  // A ratio close to a power of ten would look like a decimal slip instead.
  if (x > 0 && distanceToInteger(Math.log10(v[C.lum] / x)) < 0.15) return null;
  const e = err(s.relLum / Math.LN10);
  const out: Entry = {
    kind: 'log-in-linear',
    ...change(C.lum, v[C.lum], x),
    expect: UNIT_MIXUP,
    alsoAllowed: [],
    alsoChanged: [change(C.eLum, v[C.eLum], e)],
    detail: `log10 L (and its error in dex) pasted into the linear luminosity column; the star has L = ${v[C.lum]} L_sun`,
  };
  v[C.lum] = x;
  v[C.eLum] = e;
  return out;
};

/** L low and high for an Eddington judgement at k sigma: linear, and the two log-error readings. */
function lowLuminosities(l: number, e: number, k: number): { min: number; max: number } {
  const linear = l - k * e;
  const logApprox = l * Math.pow(10, (-k * e) / (l * Math.LN10));
  const logExact = l * Math.pow(1 - e / l, k);
  return { min: Math.min(linear, logApprox, logExact), max: Math.max(linear, logApprox, logExact) };
}

function wrongMass(kind: 'super-eddington' | 'eddington-warning'): Attempt {
  return (s, rng) => {
    const v = s.v;
    if (s.stage !== 'MS' || !(v[C.mass] >= 40 && v[C.mass] <= 90)) return null;
    const m = v[C.mass];
    const l = v[C.lum];
    const el = v[C.eLum];
    const rm = s.relMass;
    let lo: number;
    let hi: number;
    if (kind === 'super-eddington') {
      // Impossible for any composition even at L - 3 sigma, M + 3 sigma, with 30 % to spare.
      lo = Math.max(6, (1.3 * LEDD_X0 * m * (1 + 3 * rm)) / lowLuminosities(l, el, 3).min);
      hi = 10;
    } else {
      // Above the X = 0.7 limit at k = 3 (15 % to spare), below the X = 0 limit at k = 1 (10 % to
      // spare), so the rule warns for any sigma setting from 1 to 3.
      lo = (1.15 * LEDD_X07 * m * (1 + 3 * rm)) / lowLuminosities(l, el, 3).min;
      hi = (0.9 * LEDD_X0 * m) / lowLuminosities(l, el, 1).max;
    }
    if (!(hi > lo * 1.01)) return null;
    const f = rng.uniform(lo * 1.005, hi / 1.005);
    const ml = val(m / f);
    const eml = err(rm * (m / f));
    for (let k = 1; k <= 3; k++) {
      const low = lowLuminosities(l, el, k);
      if (kind === 'super-eddington') {
        if (!(low.min > 1.3 * LEDD_X0 * (ml + k * eml))) return null;
      } else {
        if (!(low.min > 1.15 * LEDD_X07 * (ml + k * eml))) return null;
        if (!(low.max < 0.9 * LEDD_X0 * ml)) return null;
      }
    }
    const out: Entry = {
      kind,
      ...change(C.mass, m, ml),
      expect: [{ rule: 'eddington-limit', severity: kind === 'super-eddington' ? 'error' : 'warning' }],
      alsoAllowed: WRONG_MASS_ALSO,
      alsoChanged: [change(C.eMass, v[C.eMass], eml)],
      detail: `listed mass is the true ${m} M_sun divided by ${f.toFixed(2)}; L, R, Teff and logg are the true star's (L/L_Edd(X = ${kind === 'super-eddington' ? '0' : '0.7'}) = ${(l / ((kind === 'super-eddington' ? LEDD_X0 : LEDD_X07) * ml)).toFixed(2)})`,
    };
    v[C.mass] = ml;
    v[C.eMass] = eml;
    return out;
  };
}

function offRelation(kind: 'ml-faint' | 'ml-bright'): Attempt {
  return (s, rng) => {
    const v = s.v;
    if (s.kind !== 'ms' || !(v[C.mass] > 0.3 && v[C.mass] < 20)) return null;
    const rel = EKER_2018.logL(v[C.mass]);
    if (!Number.isFinite(rel)) return null;
    // Kept clear of a whole dex so it never reads as a decimal slip.
    const shift = rng.uniform(1.15, 1.5) * (kind === 'ml-bright' ? 1 : -1);
    const l = val(Math.pow(10, rel + shift));
    const el = err(s.relLum * l);
    const t = val(teffFromLuminosityRadius(l, v[C.radius]));
    const et = err(teffError(t, s.teffDraw));
    const mb = mag(mbolFromLuminosity(l));
    if (!(t >= 2800 && t <= 45_000)) return null;
    const resid = Math.log10(l) - rel;
    if (!(Math.abs(resid) >= 1.1 && Math.abs(resid) <= 1.55)) return null;
    // No wrong unit may fit the mass better than the declared one does.
    for (const r of otherReadings(l)) if (Math.abs(r - rel) < Math.abs(resid) + 0.5) return null;
    if (kind === 'ml-bright' && !(l + 3 * el < 0.5 * LEDD_X07 * (v[C.mass] - 3 * v[C.eMass]))) return null;
    const out: Entry = {
      kind,
      ...change(C.lum, v[C.lum], l),
      expect: [{ rule: 'mass-luminosity-outlier', severity: 'warning' }],
      alsoAllowed: [],
      alsoChanged: [
        change(C.eLum, v[C.eLum], el),
        change(C.teff, v[C.teff], t),
        change(C.eTeff, v[C.eTeff], et),
        change(C.mbol, v[C.mbol], mb),
      ].filter((c) => c.original !== c.planted),
      detail: `L set ${Math.abs(shift).toFixed(2)} dex ${kind === 'ml-bright' ? 'above' : 'below'} Eker 2018 at M = ${v[C.mass]} M_sun; Teff follows from Stefan-Boltzmann with the same R and M_bol from L, so the row stays self-consistent`,
    };
    v[C.lum] = l;
    v[C.eLum] = el;
    v[C.teff] = t;
    v[C.eTeff] = et;
    v[C.mbol] = mb;
    return out;
  };
}

const MISSING_COLUMNS = [C.mass, C.lum, C.radius, C.teff, C.logg] as const;

function missing(column: number): Attempt {
  return (s) => {
    // Off the main sequence, R and Teff are what pins the luminosity's unit; leave them.
    if (s.stage !== 'MS' && (column === C.radius || column === C.teff)) return null;
    const v = s.v;
    const out: Entry = {
      kind: 'missing',
      ...change(column, v[column], NaN),
      expect: [],
      alsoAllowed: [],
      alsoChanged: [change(column + 1, v[column + 1], NaN)],
      detail: `${NUMERIC[column]} not measured (value and error empty)`,
    };
    v[column] = NaN;
    v[column + 1] = NaN;
    return out;
  };
}

// --- Unit slips and slipped decimal points in the other columns. ---------------------------------

/** Changes one cell (and its error, by the same factor), returning the entry. */
function scaleCell(v: Float64Array, column: number, factor: number, withError: boolean): CellChange[] {
  const x = val(v[column] * factor);
  const changes = [change(column, v[column], x)];
  v[column] = x;
  if (withError) {
    const e = err(v[column + 1] * factor);
    changes.push(change(column + 1, v[column + 1], e));
    v[column + 1] = e;
  }
  return changes;
}

function entryOf(kind: PlantKind, changes: CellChange[], expect: Expectation[], alsoAllowed: string[], detail: string): Entry {
  const [first, ...rest] = changes;
  return { kind, ...first, expect, alsoAllowed, ...(rest.length > 0 ? { alsoChanged: rest } : {}), detail };
}

/** Well below the X = 0.7 Eddington limit even at L + 3 sigma and M - 3 sigma, with room for a factor `room`. */
function farBelowEddington(v: Float64Array, room: number): boolean {
  return room * (v[C.lum] + 3 * v[C.eLum]) < 0.8 * LEDD_X07 * (v[C.mass] - 3 * v[C.eMass]);
}

/**
 * L with its decimal point one place to the right on a main-sequence row; the error is the true
 * one, as when one cell is retyped. Stefan-Boltzmann, the mass-luminosity relation and M_bol then
 * all miss by 1 dex (2.5 mag), which those rules may report too. Not on giants: there only
 * Stefan-Boltzmann holds L, and decimal-shift wants Teff vouched for by a second relation before
 * it blames L (reported to the lead).
 */
const lumTimesTen: Attempt = (s) => {
  const v = s.v;
  if (s.kind !== 'ms' || !farBelowEddington(v, 20)) return null;
  const l = v[C.lum];
  return entryOf(
    'lum-times-ten',
    scaleCell(v, C.lum, 10, false),
    [{ rule: 'decimal-shift', severity: 'warning' }],
    ['stefan-boltzmann-mismatch', 'mass-luminosity-outlier', 'bolometric-magnitude-mismatch'],
    `luminosity written with its decimal point one place off (${l} L_sun written as ${v[C.lum]}); its error, R, Teff and M_bol are the true star's`,
  );
};

function unitFactor(kind: 'mass-in-kg' | 'radius-in-km', column: number, factor: number, unit: string, rule: string): Attempt {
  return (s) => {
    if (s.kind === 'vms') return null;
    const before = s.v[column];
    return entryOf(
      kind,
      scaleCell(s.v, column, factor, true),
      [{ rule, severity: 'error' }],
      [],
      `${NUMERIC[column]} and its error written in ${unit} under the solar-units header (${before} x ${factor.toPrecision(6)})`,
    );
  };
}

/** log10 Teff in the kelvin column, with its error in dex; Teff stays a value no star has. */
const logTeff: Attempt = (s) => {
  const v = s.v;
  const t = v[C.teff];
  const x = val(Math.log10(t));
  const e = err(v[C.eTeff] / (t * Math.LN10));
  const changes = [change(C.teff, t, x), change(C.eTeff, v[C.eTeff], e)];
  v[C.teff] = x;
  v[C.eTeff] = e;
  return entryOf('log-teff', changes, [{ rule: 'temperature-unit-mixup', severity: 'error' }], [], `log10 Teff (and its error in dex) written in the kelvin column; the star has Teff = ${t} K`);
};

/** log g in SI (m s^-2): 2 dex below the cgs value the header declares. Main-sequence and giant rows. */
const loggSi: Attempt = (s) => {
  const v = s.v;
  if (s.kind === 'wd') return null;
  const g = v[C.logg];
  const x = val(g - 2);
  const changes = [change(C.logg, g, x)];
  v[C.logg] = x;
  return entryOf('logg-si', changes, [{ rule: 'gravity-unit-mixup', severity: 'error' }], [], `logg written in log(m s^-2), 2 dex below the cgs value ${g}`);
};

/**
 * Mass and radius typed into each other's columns, errors with them; on a giant or a massive
 * main-sequence star, where the two differ by 0.5 dex or more.
 */
function massRadiusSwap(kind: 'giant' | 'ms'): Attempt {
  return (s) => swapMassRadius(s, kind);
}

function swapMassRadius(s: Star, kind: 'giant' | 'ms'): Entry | null {
  const v = s.v;
  if (s.kind !== kind || !(Math.abs(Math.log10(v[C.mass] / v[C.radius])) >= 0.5)) return null;
  const [m, em, r, er] = [v[C.mass], v[C.eMass], v[C.radius], v[C.eRadius]];
  const changes = [change(C.mass, m, r), change(C.eMass, em, er), change(C.radius, r, m), change(C.eRadius, er, em)];
  v[C.mass] = r;
  v[C.eMass] = er;
  v[C.radius] = m;
  v[C.eRadius] = em;
  return entryOf('mass-radius-swap', changes, [{ rule: 'swapped-columns', severity: 'error' }], [], `mass (${m} M_sun) and radius (${r} R_sun) exchanged, with their errors`);
}

// --- Values the row's own relations contradict. -------------------------------------------------

const dex = (e: number, x: number) => e / (x * Math.LN10);

/**
 * Sigmas of a Stefan-Boltzmann miss as the rule judges it: errors in dex (R twice, Teff four times)
 * and its 0.1 dex tolerance, in quadrature.
 */
function stefanBoltzmannSigmas(v: Float64Array): number {
  const resid = Math.log10(v[C.lum]) - logLuminosityFromRadiusTeff(v[C.radius], v[C.teff]);
  const sd = Math.hypot(dex(v[C.eLum], v[C.lum]), 2 * dex(v[C.eRadius], v[C.radius]), 4 * dex(v[C.eTeff], v[C.teff]), 0.1);
  return Math.abs(resid) / sd;
}

/** The same for logg against G M / R^2, with that rule's 0.05 dex tolerance. */
function gravitySigmas(v: Float64Array): number {
  const resid = v[C.logg] - loggFromMassRadius(v[C.mass], v[C.radius]);
  const sd = Math.hypot(v[C.eLogg], dex(v[C.eMass], v[C.mass]), 2 * dex(v[C.eRadius], v[C.radius]), 0.05);
  return Math.abs(resid) / sd;
}

/** Teff 30 % off (from another source, say) with L and R kept: the row misses Stefan-Boltzmann by 0.46-0.62 dex. */
const teffOff: Attempt = (s, rng) => {
  const v = s.v;
  if (s.kind === 'wd') return null;
  const t0 = v[C.teff];
  const et0 = v[C.eTeff];
  const t = val(t0 * (rng.next() < 0.5 ? 0.7 : 1.3));
  if (!(t >= 3000 && t <= 45_000)) return null;
  v[C.teff] = t;
  v[C.eTeff] = err(teffError(t, s.teffDraw));
  if (!(stefanBoltzmannSigmas(v) >= 4.5)) {
    v[C.teff] = t0;
    v[C.eTeff] = et0;
    return null;
  }
  return entryOf(
    'teff-off',
    [change(C.teff, t0, t), change(C.eTeff, et0, v[C.eTeff])].filter((c) => c.original !== c.planted),
    [{ rule: 'stefan-boltzmann-mismatch', severity: 'warning' }],
    [],
    `Teff ${t > t0 ? '30 % too hot' : '30 % too cool'} (true ${t0} K); L and R kept, so the row misses Stefan-Boltzmann by ${Math.abs(4 * Math.log10(t / t0)).toFixed(2)} dex`,
  );
};

/**
 * logg 0.55-0.75 dex off G M / R^2 on a main-sequence row, staying inside the main-sequence band:
 * far from the 1 dex of a tenfold mass and the 2 dex of SI units, so only the gravity rule can speak.
 */
const loggOff: Attempt = (s, rng) => {
  const v = s.v;
  if (s.kind !== 'ms') return null;
  const g0 = v[C.logg];
  const step = rng.uniform(0.55, 0.75);
  const g = val(g0 + step > 5.3 ? g0 - step : g0 - step < 3.7 ? g0 + step : rng.next() < 0.5 ? g0 - step : g0 + step);
  if (!(g >= 3.7 && g <= 5.3)) return null;
  v[C.logg] = g;
  if (!(gravitySigmas(v) >= 4.5)) {
    v[C.logg] = g0;
    return null;
  }
  return entryOf(
    'logg-off',
    [change(C.logg, g0, g)],
    [{ rule: 'surface-gravity-mismatch', severity: 'warning' }],
    [],
    `logg ${Math.abs(g - g0).toFixed(2)} dex ${g > g0 ? 'above' : 'below'} G M / R^2 (true ${g0}); M and R kept`,
  );
};

/** M_bol with its sign dropped or flipped; only where |M_bol| >= 2, so the miss is 4 mag or more. */
const mbolSign: Attempt = (s) => {
  const v = s.v;
  const m = v[C.mbol];
  if (!(Math.abs(m) >= 2)) return null;
  const changes = [change(C.mbol, m, -m)];
  v[C.mbol] = -m;
  return entryOf('mbol-sign', changes, [{ rule: 'bolometric-magnitude-mismatch', severity: 'error' }], [], `M_bol written with the wrong sign (true ${m})`);
};

/** M_bol one magnitude off (a mistyped units digit): 0.4 dex in L, well over the rule's tolerance. */
const mbolOneMag: Attempt = (s, rng) => {
  const v = s.v;
  const m = v[C.mbol];
  const sd = Math.hypot(2.5 * dex(v[C.eLum], v[C.lum]), 0.1);
  if (!(1 / sd >= 4.5)) return null;
  const x = mag(m + (rng.next() < 0.5 ? -1 : 1));
  const changes = [change(C.mbol, m, x)];
  v[C.mbol] = x;
  return entryOf('mbol-one-mag', changes, [{ rule: 'bolometric-magnitude-mismatch', severity: 'warning' }], [], `M_bol one magnitude ${x > m ? 'too faint' : 'too bright'} (true ${m})`);
};

/**
 * The distance in kpc, or the parallax (and its error) in arcsec, under the pc and mas headers.
 * Parallaxes in arcsec only for stars within 200 pc: parallax-distance-mismatch adds a 0.02 mas
 * zero-point term to the parallax as written, which for a parallax of 0.0014 "mas" (an arcsec
 * value at 700 pc) is 1.2 dex and hides the 3 dex of the slip (reported to the lead).
 */
function parallaxUnit(kind: 'dist-in-kpc' | 'parallax-in-arcsec'): Attempt {
  return (s) => {
    const v = s.v;
    if (kind === 'parallax-in-arcsec' && !(v[C.plx] >= 5)) return null;
    const column = kind === 'dist-in-kpc' ? C.dist : C.plx;
    const before = v[column];
    return entryOf(
      kind,
      scaleCell(v, column, 1e-3, kind === 'parallax-in-arcsec'),
      [{ rule: 'parallax-distance-mismatch', severity: 'error' }],
      [],
      kind === 'dist-in-kpc' ? `distance written in kpc (${before} pc)` : `parallax and its error written in arcsec (${before} mas)`,
    );
  };
}

// --- Values no star (or no star of its class) has, codes, and broken uncertainties. -------------

/**
 * A mass below the hydrogen-burning limit on a late-M dwarf's row, with logg recomputed from it, so
 * the row stays consistent; the mass-luminosity relations do not reach below 0.1 M_sun.
 */
const brownDwarfMass: Attempt = (s, rng) => {
  const v = s.v;
  if (s.kind !== 'ms' || !(v[C.mass] < 0.2)) return null;
  const m = val(rng.uniform(0.04, 0.055));
  const em = err(s.relMass * m);
  // Below the 0.075 M_sun limit even at 3 sigma towards it.
  if (!(m + 3 * em < 0.072)) return null;
  const g = val(loggFromMassRadius(m, v[C.radius]));
  if (!(g >= 3.7 && g <= 5.4)) return null;
  const changes = [change(C.mass, v[C.mass], m), change(C.eMass, v[C.eMass], em), change(C.logg, v[C.logg], g)];
  v[C.mass] = m;
  v[C.eMass] = em;
  v[C.logg] = g;
  return entryOf('brown-dwarf-mass', changes, [{ rule: 'value-out-of-range', severity: 'warning' }], [], `mass set to ${m} M_sun, below the hydrogen-burning limit, on a row labelled MS; logg follows from M and R`);
};

/** A distance of exactly 0 pc (a placeholder written as a number). */
const zeroDistance: Attempt = (s) => {
  const v = s.v;
  const changes = [change(C.dist, v[C.dist], 0)];
  v[C.dist] = 0;
  return entryOf('zero-distance', changes, [{ rule: 'value-out-of-range', severity: 'error' }], [], 'distance written as 0 pc');
};

/** -999 for "not measured" in a value column (Teff twice, then the mass); one note per column. */
const SENTINEL_COLUMNS = [C.teff, C.teff, C.mass] as const;

function sentinel(column: number): Attempt {
  return (s) => {
    const changes = [change(column, s.v[column], -999)];
    s.v[column] = -999;
    const e = entryOf('sentinel', changes, [], [], `${NUMERIC[column]} written as -999 for a missing value (its error kept)`);
    return { ...e, expectColumn: [{ rule: 'sentinel-value', severity: 'note', column: NUMERIC[column] }] };
  };
}

/** A symmetric error written negative. */
const NEGATIVE_ERROR_COLUMNS = [C.eMass, C.eRadius, C.ePlx] as const;

function negativeError(column: number): Attempt {
  return (s) => {
    const changes = [change(column, s.v[column], -s.v[column])];
    s.v[column] = -s.v[column];
    return entryOf('negative-error', changes, [{ rule: 'uncertainty-invalid', severity: 'error' }], [], `${NUMERIC[column]} written negative`);
  };
}

// --- Duplicates: the row is replaced by a copy of an earlier row of the same stage. -----------

/**
 * Picks an earlier clean row of the same stage (with [Fe/H] where the copy changes it), scanning
 * on from a random row below `index`; marks it taken so no later kind alters it.
 */
function pickSource(block: BlockPick, rng: Rng, ok: (src: Star) => boolean): number {
  const { stars, index, taken } = block;
  if (index < 1) return -1;
  const start = rng.int(index);
  for (let step = 0; step < index; step++) {
    const j = (start + step) % index;
    if (taken[j] || !isFiniteAll(stars[j].v) || stars[j].stage !== stars[index].stage || !ok(stars[j])) continue;
    taken[j] = 1;
    block.source = j;
    return j;
  }
  return -1;
}

function duplicate(kind: 'same-id' | 'same-row' | 'conflicting-mass'): Attempt {
  return (s, rng, block) => {
    if (kind === 'conflicting-mass' && s.stage !== 'giant') return null;
    const j = pickSource(block, rng, (src) => kind !== 'same-id' || Number.isFinite(src.v[C.feh]));
    if (j < 0) return null;
    const src = block.stars[j];
    const v = src.v.slice();
    const differs: CellChange[] = [];
    const set = (column: number, x: number) => {
      differs.push(change(column, v[column], x));
      v[column] = x;
    };
    let expect: Expectation[];
    let detail: string;
    if (kind === 'same-id') {
      // The same star listed again from a second source that gives another [Fe/H].
      set(C.feh, Number((v[C.feh] + (rng.next() < 0.5 ? -1 : 1) * rng.uniform(0.05, 0.15)).toFixed(2)) + 0);
      expect = [{ rule: 'duplicate-id', severity: 'warning' }];
      detail = 'the star of the earlier row listed again with another [Fe/H]; every other value the same';
    } else if (kind === 'same-row') {
      expect = [
        { rule: 'duplicate-row', severity: 'warning' },
        { rule: 'duplicate-id', severity: 'warning' },
      ];
      detail = 'an exact copy of the earlier row';
    } else {
      // A second source with three times the mass; its logg follows from that mass and the same R.
      const m = val(v[C.mass] * 3);
      set(C.mass, m);
      set(C.eMass, err(src.relMass * m));
      set(C.logg, val(loggFromMassRadius(m, v[C.radius])));
      expect = [
        { rule: 'conflicting-duplicate', severity: 'warning' },
        { rule: 'duplicate-id', severity: 'warning' },
      ];
      detail = `the giant of the earlier row listed again with three times its mass (${src.v[C.mass]} -> ${m} M_sun), logg from that mass`;
    }
    const copy: Star = { ...src, v, idIndex: j };
    block.stars[block.index] = copy;
    const expectColumn: ColumnExpectation[] = [{ rule: 'duplicate-id', severity: 'note', column: 'star_id' }];
    if (kind === 'same-row') expectColumn.push({ rule: 'duplicate-row', severity: 'note' });
    return {
      kind,
      column: 'star_id',
      original: starId(block.index + 1),
      planted: starId(j + 1),
      expect,
      alsoAllowed: [],
      expectColumn,
      copyOf: { differs },
      detail,
    };
  };
}

// --- Text-level slips, which only the CSV holds. ----------------------------------------------

const TEXT_SLIPS: readonly { column: number; text: (x: number) => string; what: string }[] = [
  { column: C.mass, text: (x) => `${x}?`, what: 'a value marked uncertain with a question mark' },
  { column: C.teff, text: (x) => `~${x}`, what: 'an approximate value marked with a tilde' },
  { column: C.radius, text: (x) => String(x).replace('.', '..'), what: 'a doubled decimal point' },
];

function textInNumber(slip: (typeof TEXT_SLIPS)[number]): Attempt {
  return (s) => {
    const x = s.v[slip.column];
    const text = slip.text(x);
    s.csvText = { [slip.column]: text };
    s.v[slip.column] = NaN;
    return {
      ...entryOf('text-in-number', [change(slip.column, x, text)], [{ rule: 'unparseable-value', severity: 'warning' }], [], `${NUMERIC[slip.column]} written as "${text}": ${slip.what}`),
      csvOnly: true,
    };
  };
}

/** Records cut short: the last fields missing (the reader takes them as empty). */
const RAGGED_DROPS = [5, 2] as const;

function raggedRow(dropped: number): Attempt {
  return (s) => {
    const v = s.v;
    const changes: CellChange[] = [];
    for (let c = NUMERIC.length - dropped + 1; c < NUMERIC.length; c++) {
      changes.push(change(c, v[c], NaN));
      v[c] = NaN;
    }
    changes.push({ column: 'stage', original: s.stage, planted: null });
    s.csvDropped = dropped;
    return {
      ...entryOf('ragged-row', changes, [{ rule: 'malformed-row', severity: 'error' }], [], `the record ends after ${NUMERIC[NUMERIC.length - dropped]}: its last ${dropped} fields are missing`),
      csvOnly: true,
    };
  };
}

function attemptFor(kind: PlantKind, j: number): Attempt {
  switch (kind) {
    case 'watts':
      return unitSlip('watts', L_SUN_W, 'W');
    case 'erg':
      return unitSlip('erg', L_SUN_W * 1e7, 'erg/s');
    case 'log-in-linear':
      return logInLinear;
    case 'super-eddington':
    case 'eddington-warning':
      return wrongMass(kind);
    case 'ml-faint':
    case 'ml-bright':
      return offRelation(kind);
    case 'missing':
      return missing(MISSING_COLUMNS[j % MISSING_COLUMNS.length]);
    case 'lum-times-ten':
      return lumTimesTen;
    case 'mass-in-kg':
      return unitFactor(kind, C.mass, M_SUN_KG, 'kg', 'mass-unit-mixup');
    case 'radius-in-km':
      return unitFactor(kind, C.radius, R_SUN_M / 1000, 'km', 'radius-unit-mixup');
    case 'log-teff':
      return logTeff;
    case 'logg-si':
      return loggSi;
    case 'mass-radius-swap':
      return massRadiusSwap(j % 3 === 2 ? 'ms' : 'giant');
    case 'teff-off':
      return teffOff;
    case 'logg-off':
      return loggOff;
    case 'mbol-sign':
      return mbolSign;
    case 'mbol-one-mag':
      return mbolOneMag;
    case 'dist-in-kpc':
    case 'parallax-in-arcsec':
      return parallaxUnit(kind);
    case 'sentinel':
      return sentinel(SENTINEL_COLUMNS[j % SENTINEL_COLUMNS.length]);
    case 'negative-error':
      return negativeError(NEGATIVE_ERROR_COLUMNS[j % NEGATIVE_ERROR_COLUMNS.length]);
    case 'brown-dwarf-mass':
      return brownDwarfMass;
    case 'zero-distance':
      return zeroDistance;
    case 'same-id':
    case 'same-row':
    case 'conflicting-mass':
      return duplicate(kind);
    case 'text-in-number':
      return textInNumber(TEXT_SLIPS[j % TEXT_SLIPS.length]);
    case 'ragged-row':
      return raggedRow(RAGGED_DROPS[j % RAGGED_DROPS.length]);
  }
}

function plantBlock(rng: Rng, stars: Star[], scale: number): Planted[] {
  const taken = new Uint8Array(stars.length);
  const planted: Planted[] = [];
  for (const [kind, full] of PLANT_COUNTS) {
    const want = Math.round(full * scale);
    for (let j = 0; j < want; j++) {
      const attempt = attemptFor(kind, j);
      // Scanning on from a random row visits every row once without building a candidate list.
      const n = stars.length;
      const start = rng.int(n);
      let done = false;
      for (let step = 0; step < n && !done; step++) {
        const i = (start + step) % n;
        if (taken[i] || !isFiniteAll(stars[i].v)) continue;
        // An attempt changes the star (or its place in the block) only when it succeeds.
        const block: BlockPick = { stars, index: i, taken, source: -1 };
        const entry = attempt(stars[i], rng, block);
        if (!entry) continue;
        taken[i] = 1;
        planted.push({ index: i, source: block.source, entry });
        done = true;
      }
    }
  }
  return planted.sort((a, b) => a.index - b.index);
}

// ---------------------------------------------------------------------------------------------
// Output.

const ARROW_BATCH_ROWS = 20 * BLOCK_ROWS;

const SCHEMA = new Schema(
  COLUMNS.map((name) => new Field(name, name === 'star_id' || name === 'stage' ? new Utf8() : new Float64(), name !== 'star_id')),
  new Map([
    ['survey', SURVEY],
    ['release', RELEASE],
  ]),
);

function floatData(values: Float64Array, n: number): Data<Float64> {
  const bitmap = new Uint8Array(((n + 63) >> 6) << 3);
  let nulls = 0;
  for (let i = 0; i < n; i++) {
    if (Number.isNaN(values[i])) nulls++;
    else bitmap[i >> 3] |= 1 << (i & 7);
  }
  return makeData({ type: new Float64(), length: n, nullCount: nulls, nullBitmap: nulls > 0 ? bitmap : null, data: values.slice(0, n) });
}

function writeAll(fd: number, bytes: Uint8Array): void {
  let off = 0;
  while (off < bytes.byteLength) off += writeSync(fd, bytes, off, bytes.byteLength - off);
}

/**
 * Arrow IPC file writer that never holds more than one record batch of output: the writer's byte
 * queue is drained to disk (synchronously, in microtasks) before the next batch is made.
 */
class ArrowFileOut {
  private readonly writer = new RecordBatchFileWriter();
  private readonly drained: Promise<void>;
  private readonly ids: string[] = [];
  private readonly stages: (string | null)[] = [];
  private readonly cols = NUMERIC.map(() => new Float64Array(ARROW_BATCH_ROWS + BLOCK_ROWS));
  private n = 0;
  constructor(private readonly fd: number) {
    this.drained = (async () => {
      for await (const chunk of this.writer) writeAll(this.fd, chunk);
    })();
  }
  /** Rows are added a block at a time; a batch is cut once it holds ARROW_BATCH_ROWS rows. */
  add(id: string, stage: string | null, v: Float64Array): void {
    this.ids.push(id);
    this.stages.push(stage);
    for (let c = 0; c < v.length; c++) this.cols[c][this.n] = v[c];
    this.n++;
  }
  async endBlock(): Promise<void> {
    if (this.n >= ARROW_BATCH_ROWS) await this.flush();
  }
  async flush(): Promise<void> {
    if (this.n === 0) return;
    const n = this.n;
    const children: Data[] = [];
    for (const f of SCHEMA.fields) {
      if (f.name === 'star_id') children.push(vectorFromArray(this.ids, new Utf8()).data[0]);
      else if (f.name === 'stage') children.push(vectorFromArray(this.stages, new Utf8()).data[0]);
      else children.push(floatData(this.cols[NUMERIC.indexOf(f.name)], n));
    }
    const data = makeData({ type: new Struct(SCHEMA.fields), length: n, nullCount: 0, children });
    this.writer.write(new RecordBatch(SCHEMA, data));
    this.ids.length = 0;
    this.stages.length = 0;
    this.n = 0;
    await new Promise<void>((r) => setImmediate(r));
  }
  async close(): Promise<void> {
    await this.flush();
    this.writer.close();
    await this.drained;
  }
}

export interface MakeOptions {
  rows?: number;
  seed?: number;
  /** Path prefix: PREFIX.csv, PREFIX.arrow, PREFIX.truth.json. */
  out?: string;
  plant?: boolean;
}

export interface MakeSummary {
  rows: number;
  seed: number;
  files: { csv: string; arrow: string; truth: string };
  stages: Record<Stage, number>;
  planted: Record<string, number>;
}

export function starId(row: number): string {
  return `TWC-${String(row).padStart(6, '0')}`;
}

export async function makeSamples(options: MakeOptions = {}): Promise<MakeSummary> {
  const rows = options.rows ?? DEFAULT_ROWS;
  const seed = options.seed ?? DEFAULT_SEED;
  const plant = options.plant ?? true;
  const prefix = resolve(options.out ?? DEFAULT_PREFIX);
  if (!Number.isInteger(rows) || rows < 1) throw new Error(`--rows must be a positive integer, not ${rows}`);
  if (!Number.isInteger(seed) || seed < 0 || seed > 0xffffffff) throw new Error(`--seed must be an integer 0-4294967295, not ${seed}`);
  const files = { csv: `${prefix}.csv`, arrow: `${prefix}.arrow`, truth: `${prefix}.truth.json` };
  mkdirSync(dirname(prefix), { recursive: true });

  // The planting stream is separate, so --no-plant gives the same stars without the errors.
  const popRng = new Rng(seed);
  const plantRng = new Rng((seed ^ 0x9e3779b9) >>> 0);
  const astroRng = new Rng((seed ^ 0x85ebca6b) >>> 0);

  const tmp = (p: string) => `${p}.${process.pid}.tmp`;
  const csvFd = openSync(tmp(files.csv), 'w');
  const arrowFd = openSync(tmp(files.arrow), 'w');
  const truthFd = openSync(tmp(files.truth), 'w');
  const arrow = new ArrowFileOut(arrowFd);
  const stages: Record<Stage, number> = { MS: 0, giant: 0, WD: 0 };
  const plantedCounts: Record<string, number> = Object.fromEntries(PLANT_COUNTS.map(([k]) => [k, 0]));
  try {
    const header = [
      `# ${SURVEY}, data release 1 (${RELEASE}): an invented survey, made for the starsieve demos.`,
      `# Made by sample-catalogs/make-samples.ts --rows ${rows} --seed ${seed}${plant ? '' : ' --no-plant'}.`,
      '# Units: mass M_sun; lum L_sun (IAU 2015 nominal, 3.828e26 W); radius R_sun (nominal); teff K;',
      '# logg log10(g / cm s^-2); feh dex; parallax mas; dist pc (1000 / parallax); mbol mag, the absolute',
      '# bolometric magnitude on the IAU 2015 B2 scale (4.74 for the Sun).',
      '# Each e_ column is the 1-sigma error of the column before it.',
      '# stage: MS (main sequence), giant, WD (white dwarf). An empty cell is a missing value.',
      plant ? '# Some rows carry deliberate errors; the matching .truth.json file lists them.' : '# No deliberate errors were planted.',
      COLUMNS.join(','),
    ];
    writeSync(csvFd, header.join('\n') + '\n');
    writeSync(
      truthFd,
      `{\n  "survey": ${JSON.stringify(SURVEY)},\n  "release": ${JSON.stringify(RELEASE)},\n  "generator": "sample-catalogs/make-samples.ts",\n  "seed": ${seed},\n  "rows": ${rows},\n  "csvOnly": ${JSON.stringify(CSV_ONLY_NOTE)},\n  "planted": [`,
    );
    let firstEntry = true;
    for (let first = 0; first < rows; first += BLOCK_ROWS) {
      const n = Math.min(BLOCK_ROWS, rows - first);
      const stars = makeBlock(popRng, astroRng, n);
      const planted = plant ? plantBlock(plantRng, stars, n / BLOCK_ROWS) : [];
      let text = '';
      for (let i = 0; i < n; i++) {
        const s = stars[i];
        const id = starId(first + (s.idIndex ?? i) + 1);
        stages[s.stage]++;
        text += csvLine(id, s) + '\n';
        arrow.add(id, s.csvDropped ? null : s.stage, s.v);
      }
      writeSync(csvFd, text);
      await arrow.endBlock();
      let entries = '';
      for (const p of planted) {
        const row = first + p.index + 1;
        const { copyOf, ...rest } = p.entry;
        const entry: PlantedEntry = {
          row,
          id: starId(p.source >= 0 ? first + p.source + 1 : row),
          ...rest,
          ...(copyOf ? { copyOf: { row: first + p.source + 1, differs: copyOf.differs } } : {}),
        };
        plantedCounts[entry.kind]++;
        entries += (firstEntry ? '\n    ' : ',\n    ') + JSON.stringify(entry);
        firstEntry = false;
      }
      if (entries) writeSync(truthFd, entries);
    }
    await arrow.close();
    writeSync(
      truthFd,
      `${firstEntry ? '' : '\n  '}],\n  "stages": ${JSON.stringify(stages)},\n  "plantedCounts": ${JSON.stringify(plantedCounts)}\n}\n`,
    );
  } finally {
    closeSync(csvFd);
    closeSync(arrowFd);
    closeSync(truthFd);
  }
  for (const p of Object.values(files)) renameSync(tmp(p), p);
  return { rows, seed, files, stages, planted: plantedCounts };
}

// ---------------------------------------------------------------------------------------------
// Command line.

const USAGE = `usage: npx tsx sample-catalogs/make-samples.ts [--rows N] [--seed S] [--out PREFIX] [--no-plant]
  --rows N      rows to write (default ${DEFAULT_ROWS})
  --seed S      seed, an integer 0-4294967295 (default ${DEFAULT_SEED})
  --out PREFIX  write PREFIX.csv, PREFIX.arrow and PREFIX.truth.json (default sample-catalogs/thistlewood-dr1)
  --no-plant    write clean rows only (the truth file then lists nothing)`;

function parseArgs(argv: string[]): MakeOptions {
  const o: MakeOptions = {};
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    const next = () => {
      const v = argv[++i];
      if (v === undefined) throw new Error(`${a} needs a value`);
      return v;
    };
    if (a === '--rows') o.rows = Number(next());
    else if (a === '--seed') o.seed = Number(next());
    else if (a === '--out') o.out = next();
    else if (a === '--no-plant') o.plant = false;
    else if (a === '--help' || a === '-h') {
      console.log(USAGE);
      process.exit(0);
    } else throw new Error(`unknown option ${a}`);
  }
  return o;
}

if (process.argv[1] && import.meta.url === pathToFileURL(resolve(process.argv[1])).href) {
  let options: MakeOptions;
  try {
    options = parseArgs(process.argv.slice(2));
  } catch (e) {
    console.error(`${(e as Error).message}\n${USAGE}`);
    process.exit(2);
  }
  const t0 = performance.now();
  makeSamples(options).then(
    (s) => {
      const secs = (performance.now() - t0) / 1000;
      const rssMb = process.resourceUsage().maxRSS / 1024;
      const planted = Object.entries(s.planted)
        .filter(([, n]) => n > 0)
        .map(([k, n]) => `${k} ${n}`)
        .join(', ');
      console.log(
        `${s.rows} rows (MS ${s.stages.MS}, giant ${s.stages.giant}, WD ${s.stages.WD}), seed ${s.seed}\n` +
          `planted: ${planted || 'none'}\n` +
          `wrote ${s.files.csv}, ${s.files.arrow}, ${s.files.truth}\n` +
          `${secs.toFixed(1)} s, peak RSS ${rssMb.toFixed(0)} MB`,
      );
    },
    (e) => {
      console.error(`make-samples: ${(e as Error).message}`);
      process.exit(1);
    },
  );
}
