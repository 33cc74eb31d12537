/**
 * Builds the demo catalogs of the Thistlewood Stellar Census (an invented survey), data release 1:
 * a CSV, the same table as an Arrow IPC file, and a ground-truth file listing every planted error.
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
import { L_SUN_W } from '../rules/physics/constants.js';
import { eddingtonLuminosity } from '../rules/physics/eddington.js';
import { EKER_2018 } from '../rules/physics/mass-luminosity.js';
import { loggFromMassRadius, luminosityFromRadiusTeff, teffFromLuminosityRadius } from '../rules/physics/stellar.js';
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
  'stage',
] as const;
/** The numeric columns, in file order; index into a row's value array. */
export const NUMERIC = COLUMNS.slice(1, 12) as readonly string[];
const C = { mass: 0, eMass: 1, lum: 2, eLum: 3, radius: 4, eRadius: 5, teff: 6, eTeff: 7, logg: 8, eLogg: 9, feh: 10 } as const;

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
/** Shortest text that reads back as exactly this double; NaN is an empty cell. */
export function cell(v: number): string {
  return Number.isNaN(v) ? '' : String(v);
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
  /** Values as written (rounded). */
  v: Float64Array;
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
  return v;
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

function makeBlock(rng: Rng, n: number): Star[] {
  const comp = composition(n);
  const kinds: Kind[] = [];
  for (const k of ['ms', 'vms', 'giant', 'wd'] as const) for (let i = 0; i < comp[k]; i++) kinds.push(k);
  rng.shuffle(kinds);
  return kinds.map((k) => (k === 'ms' || k === 'vms' ? mainSequence(rng, k) : k === 'giant' ? giant(rng) : whiteDwarf(rng)));
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
  | 'missing';

export interface Expectation {
  rule: string;
  severity: 'error' | 'warning' | 'note';
}

export interface CellChange {
  column: string;
  original: number | null;
  planted: number | null;
}

export interface PlantedEntry extends CellChange {
  row: number;
  id: string;
  kind: PlantKind;
  expect: Expectation[];
  alsoAllowed: string[];
  /** Cells that moved with the planted one (its error, or Teff kept on Stefan-Boltzmann). */
  alsoChanged?: CellChange[];
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
];

const UNIT_MIXUP: Expectation[] = [{ rule: 'luminosity-unit-mixup', severity: 'error' }];
/**
 * A mistyped mass also breaks logg = log(G M / R^2) (logg is the true star's), and a divisor near
 * 10 is a decimal slip in all but name; those rules may rightly speak up too.
 */
const WRONG_MASS_ALSO = ['mass-luminosity-outlier', 'surface-gravity-mismatch', 'decimal-shift'];

const LOG_LSUN_W = Math.log10(L_SUN_W);
const LOG_LSUN_ERG = LOG_LSUN_W + 7;

interface Planted {
  index: number;
  entry: Omit<PlantedEntry, 'row' | 'id'>;
}

function change(column: number, original: number, planted: number): CellChange {
  return {
    column: NUMERIC[column],
    original: Number.isNaN(original) ? null : original,
    planted: Number.isNaN(planted) ? null : planted,
  };
}

/** The luminosity a cell would mean read in each wrong unit, in log L_sun. */
function otherReadings(x: number): number[] {
  const lin = x > 0 ? Math.log10(x) : NaN;
  return [lin - LOG_LSUN_W, lin - LOG_LSUN_ERG, x, x - LOG_LSUN_W, x - LOG_LSUN_ERG];
}

function distanceToInteger(x: number): number {
  return Math.abs(x - Math.round(x));
}

type Attempt = (s: Star, rng: Rng) => Omit<PlantedEntry, 'row' | 'id'> | null;

function unitSlip(kind: 'watts' | 'erg', factor: number, label: string): Attempt {
  return (s) => {
    const v = s.v;
    const l = val(v[C.lum] * factor);
    const e = err(v[C.eLum] * factor);
    const out: Omit<PlantedEntry, 'row' | 'id'> = {
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
  const out: Omit<PlantedEntry, 'row' | 'id'> = {
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
    const out: Omit<PlantedEntry, 'row' | 'id'> = {
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
    if (!(t >= 2800 && t <= 45_000)) return null;
    const resid = Math.log10(l) - rel;
    if (!(Math.abs(resid) >= 1.1 && Math.abs(resid) <= 1.55)) return null;
    // No wrong unit may fit the mass better than the declared one does.
    for (const r of otherReadings(l)) if (Math.abs(r - rel) < Math.abs(resid) + 0.5) return null;
    if (kind === 'ml-bright' && !(l + 3 * el < 0.5 * LEDD_X07 * (v[C.mass] - 3 * v[C.eMass]))) return null;
    const out: Omit<PlantedEntry, 'row' | 'id'> = {
      kind,
      ...change(C.lum, v[C.lum], l),
      expect: [{ rule: 'mass-luminosity-outlier', severity: 'warning' }],
      alsoAllowed: [],
      alsoChanged: [change(C.eLum, v[C.eLum], el), change(C.teff, v[C.teff], t), change(C.eTeff, v[C.eTeff], et)].filter(
        (c) => c.original !== c.planted,
      ),
      detail: `L set ${Math.abs(shift).toFixed(2)} dex ${kind === 'ml-bright' ? 'above' : 'below'} Eker 2018 at M = ${v[C.mass]} M_sun; Teff follows from Stefan-Boltzmann with the same R, so the row stays self-consistent`,
    };
    v[C.lum] = l;
    v[C.eLum] = el;
    v[C.teff] = t;
    v[C.eTeff] = et;
    return out;
  };
}

const MISSING_COLUMNS = [C.mass, C.lum, C.radius, C.teff, C.logg] as const;

function missing(column: number): Attempt {
  return (s) => {
    // Off the main sequence, R and Teff are what pins the luminosity's unit; leave them.
    if (s.stage !== 'MS' && (column === C.radius || column === C.teff)) return null;
    const v = s.v;
    const out: Omit<PlantedEntry, 'row' | 'id'> = {
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

function plantBlock(rng: Rng, stars: Star[], scale: number): Planted[] {
  const taken = new Uint8Array(stars.length);
  const planted: Planted[] = [];
  for (const [kind, full] of PLANT_COUNTS) {
    const want = Math.round(full * scale);
    for (let j = 0; j < want; j++) {
      const attempt: Attempt =
        kind === 'watts'
          ? unitSlip('watts', L_SUN_W, 'W')
          : kind === 'erg'
            ? unitSlip('erg', L_SUN_W * 1e7, 'erg/s')
            : kind === 'log-in-linear'
              ? logInLinear
              : kind === 'super-eddington' || kind === 'eddington-warning'
                ? wrongMass(kind)
                : kind === 'ml-faint' || kind === 'ml-bright'
                  ? offRelation(kind)
                  : missing(MISSING_COLUMNS[j % MISSING_COLUMNS.length]);
      // Scanning on from a random row visits every row once without building a candidate list.
      const n = stars.length;
      const start = rng.int(n);
      let done = false;
      for (let step = 0; step < n && !done; step++) {
        const i = (start + step) % n;
        if (taken[i] || !isFiniteAll(stars[i].v)) continue;
        // An attempt changes the star only when it succeeds.
        const entry = attempt(stars[i], rng);
        if (!entry) continue;
        taken[i] = 1;
        planted.push({ index: i, entry });
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
  private readonly stages: string[] = [];
  private readonly cols = NUMERIC.map(() => new Float64Array(ARROW_BATCH_ROWS + BLOCK_ROWS));
  private n = 0;
  constructor(private readonly fd: number) {
    this.drained = (async () => {
      for await (const chunk of this.writer) writeAll(this.fd, chunk);
    })();
  }
  /** Rows are added a block at a time; a batch is cut once it holds ARROW_BATCH_ROWS rows. */
  add(id: string, stage: string, v: Float64Array): void {
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
      '# logg log10(g / cm s^-2); feh dex. Each e_ column is the 1-sigma error of the column before it.',
      '# stage: MS (main sequence), giant, WD (white dwarf). An empty cell is a missing value.',
      plant ? '# Some rows carry deliberate errors; the matching .truth.json file lists them.' : '# No deliberate errors were planted.',
      COLUMNS.join(','),
    ];
    writeSync(csvFd, header.join('\n') + '\n');
    writeSync(
      truthFd,
      `{\n  "survey": ${JSON.stringify(SURVEY)},\n  "release": ${JSON.stringify(RELEASE)},\n  "generator": "sample-catalogs/make-samples.ts",\n  "seed": ${seed},\n  "rows": ${rows},\n  "planted": [`,
    );
    let firstEntry = true;
    for (let first = 0; first < rows; first += BLOCK_ROWS) {
      const n = Math.min(BLOCK_ROWS, rows - first);
      const stars = makeBlock(popRng, n);
      const planted = plant ? plantBlock(plantRng, stars, n / BLOCK_ROWS) : [];
      let text = '';
      for (let i = 0; i < n; i++) {
        const s = stars[i];
        const id = starId(first + i + 1);
        stages[s.stage]++;
        let line = id;
        for (let c = 0; c < s.v.length; c++) line += ',' + cell(s.v[c]);
        text += line + ',' + s.stage + '\n';
        arrow.add(id, s.stage, s.v);
      }
      writeSync(csvFd, text);
      await arrow.endBlock();
      let entries = '';
      for (const p of planted) {
        const row = first + p.index + 1;
        const entry: PlantedEntry = { row, id: starId(row), ...p.entry };
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
