/**
 * How well one row holds together through the relations that tie its values: Stefan-Boltzmann
 * (L, R, Teff), surface gravity (M, R, logg) and, for main-sequence stars, the mass-luminosity
 * relation (M, L). Rules that ask "would the row be consistent if this cell were different?"
 * (decimal-shift, swapped-columns) set the row's values once, change one, and ask again. One
 * instance per rule run, reused row after row: no object per row.
 */
import type { Batch, ParamSpec, QuantityColumn, Reference, SampleFact } from '../../engine/types.js';
import { usableValues } from '../../engine/usable.js';
import { StarClass } from '../../physics/classify.js';
import { LOGG_SUN, TEFF_SUN_K } from '../../physics/constants.js';
import { relationAt, type RelationVerdictInput } from '../../physics/relation-choice.js';
import { loggFromMassRadius } from '../../physics/stellar.js';


const LOG_TEFF_SUN = Math.log10(TEFF_SUN_K);

/** Cells a row relation can hold, as bit flags. */
export const Cell = { Mass: 1, Radius: 2, Luminosity: 4, Teff: 8, Logg: 16 } as const;
export type Cell = (typeof Cell)[keyof typeof Cell];

export const CELL_SYMBOL: Readonly<Record<Cell, string>> = { 1: 'log M', 2: 'log R', 4: 'log L', 8: 'log Teff', 16: 'logg' };

/** Relations as bit flags, for the accounting and the messages. */
export const Relation = { StefanBoltzmann: 1, Gravity: 2, MassLuminosity: 4 } as const;

export function relationNames(bits: number): string {
  const out: string[] = [];
  if (bits & Relation.StefanBoltzmann) out.push('Stefan-Boltzmann');
  if (bits & Relation.Gravity) out.push('g = GM/R^2');
  if (bits & Relation.MassLuminosity) out.push('the main-sequence mass-luminosity relation');
  return out.join(', ');
}

/**
 * Tolerances (dex) of the relations themselves, before any measurement error. Stefan-Boltzmann:
 * 0.15 dex in L, as luminosity-unit-mixup uses (real catalogs reach 0.5 dex on grid Teff, see the
 * CARMENES PROVENANCE). Gravity: 0.1 dex, since quoted logg differs from M/R^2 by 0.05 dex even for
 * Sirius A (physics-reference.md T9). The mass-luminosity relation brings its own measured scatter.
 */
export const SB_FLOOR_DEX = 0.15;
export const GRAVITY_FLOOR_DEX = 0.1;

/** Thresholds of the rules that ask whether a changed row would hold together. */
export const ROW_FIT_PARAMS: readonly ParamSpec[] = [
  { name: 'fireSigma', type: 'number', default: 5, min: 1, description: 'The row as written must miss its relations by more than this many sigma.' },
  { name: 'acceptSigma', type: 'number', default: 3, min: 0.5, description: 'The changed row must fit every relation within this many sigma.' },
];

export const ROW_RELATION_REFERENCES: readonly Reference[] = [
  { cite: 'Stefan-Boltzmann law and g = GM/R^2 with IAU 2015 nominal solar values (IAU 2015 Resolution B3)' },
  { cite: 'Eker et al. 2018, MNRAS 479, 5491; Tout et al. 1996, MNRAS 281, 257 (main-sequence mass-luminosity relation)' },
];

/**
 * The gravity scatter of an input, measured on its first rows: a column's grid logg is a property
 * of the catalog, and judging each batch by its own scatter would make a row's verdict depend on
 * which rows share its batch.
 */
export const GRAVITY_SCATTER: SampleFact = { name: 'gravityScatter', measure: (sample) => gravityScatter({ ...sample, facts: undefined }) };

/** Batches smaller than this give no robust logg scatter (it is then taken as 0). */
const SCATTER_MIN_ROWS = 20;
const scatterCache = new WeakMap<Batch, number>();

/**
 * Robust scatter (1.4826 x median absolute deviation) of logg - (4.438 + log M - 2 log R) over the
 * rows of a batch that have all three, in dex; 0 for batches with fewer than 20 such rows. Grid
 * logg from SED fits (CARMENES: steps of 0.5 dex, up to 2.8 dex from M/R^2) makes this large, and
 * rules add it to every gravity-based sigma, so a 2-dex disagreement in such a column is not read
 * as cgs/SI or a unit slip. A column wholly in another unit moves the median, not the scatter.
 */
export function gravityScatter(batch: Batch): number {
  const fixed = batch.facts?.[GRAVITY_SCATTER.name];
  if (fixed !== undefined) return fixed;
  const hit = scatterCache.get(batch);
  if (hit !== undefined) return hit;
  const m = batch.quantities.mass?.value;
  const r = batch.quantities.radius?.value;
  const g = batch.quantities.logg?.value;
  let out = 0;
  if (m && r && g) {
    const res = new Float64Array(batch.length);
    let n = 0;
    for (let i = 0; i < batch.length; i++) {
      if (m[i] > 0 && r[i] > 0 && Number.isFinite(g[i])) res[n++] = g[i] - loggFromMassRadius(m[i], r[i]);
    }
    if (n >= SCATTER_MIN_ROWS) {
      const a = res.subarray(0, n).sort();
      const med = median(a);
      for (let i = 0; i < n; i++) a[i] = Math.abs(a[i] - med);
      out = 1.4826 * median(a.sort());
    }
  }
  scatterCache.set(batch, out);
  return out;
}

function median(sorted: Float64Array): number {
  const n = sorted.length;
  return n % 2 ? sorted[(n - 1) >> 1] : (sorted[n / 2 - 1] + sorted[n / 2]) / 2;
}

/**
 * One row's values as log10 (M, R, L in solar units, Teff in K; logg as it is) with their errors in
 * dex; NaN marks a missing value. `worstZ` is the largest |residual| / sigma over the relations the
 * row has; `expectedFor` what the other values imply for one cell.
 */
export class RowRelations {
  lm = NaN;
  lr = NaN;
  ll = NaN;
  lt = NaN;
  g = NaN;
  /**
   * Errors in dex below and above each value (0 where none is stated). A relation's residual is
   * judged with the error of each cell on the side that would move the row towards the relation:
   * a luminosity above 4 pi R^2 sigma Teff^4 with its lower error, R and Teff with their upper ones.
   */
  smLo = 0;
  smHi = 0;
  srLo = 0;
  srHi = 0;
  slLo = 0;
  slHi = 0;
  stLo = 0;
  stHi = 0;
  sgLo = 0;
  sgHi = 0;
  /** The symmetric view of each error: reading gives the mean of the two sides, writing sets both. */
  get sm(): number {
    return (this.smLo + this.smHi) / 2;
  }
  set sm(v: number) {
    this.smLo = this.smHi = v;
  }
  get sr(): number {
    return (this.srLo + this.srHi) / 2;
  }
  set sr(v: number) {
    this.srLo = this.srHi = v;
  }
  get sl(): number {
    return (this.slLo + this.slHi) / 2;
  }
  set sl(v: number) {
    this.slLo = this.slHi = v;
  }
  get st(): number {
    return (this.stLo + this.stHi) / 2;
  }
  set st(v: number) {
    this.stLo = this.stHi = v;
  }
  get sg(): number {
    return (this.sgLo + this.sgHi) / 2;
  }
  set sg(v: number) {
    this.sgLo = this.sgHi = v;
  }
  /** Apply the mass-luminosity relation (only for stars known to be on the main sequence). */
  mainSequence = false;
  /** Extra gravity scatter of the batch, in dex (see gravityScatter). */
  gravityScatter = 0;
  private readonly rel: RelationVerdictInput = { relation: '', logL: NaN, slope: NaN, scatter: NaN, brightAllowance: 0 };
  /** The log M `rel` was filled at, and whether a relation covered it: a row asks several times. */
  private relLm = NaN;
  private relOk = false;

  /** The default relation at the current mass, into `rel`; computed once per mass. */
  private relationAtMass(): boolean {
    if (this.lm !== this.relLm) {
      this.relOk = relationAt('default', Math.pow(10, this.lm), this.rel);
      this.relLm = this.lm;
    }
    return this.relOk;
  }

  reset(): void {
    this.lm = this.lr = this.ll = this.lt = this.g = NaN;
    this.smLo = this.smHi = this.srLo = this.srHi = this.slLo = this.slHi = 0;
    this.stLo = this.stHi = this.sgLo = this.sgHi = 0;
    this.mainSequence = false;
  }

  /** The relations the current values allow, as Relation bits. */
  available(): number {
    let bits = 0;
    const has = Number.isFinite;
    if (has(this.ll) && has(this.lr) && has(this.lt)) bits |= Relation.StefanBoltzmann;
    if (has(this.g) && has(this.lm) && has(this.lr)) bits |= Relation.Gravity;
    if (this.mainSequence && has(this.lm) && has(this.ll) && this.relationAtMass()) bits |= Relation.MassLuminosity;
    return bits;
  }

  /** Relations that involve a cell. */
  static involving(cell: Cell): number {
    switch (cell) {
      case Cell.Mass:
        return Relation.Gravity | Relation.MassLuminosity;
      case Cell.Radius:
        return Relation.StefanBoltzmann | Relation.Gravity;
      case Cell.Luminosity:
        return Relation.StefanBoltzmann | Relation.MassLuminosity;
      case Cell.Teff:
        return Relation.StefanBoltzmann;
      case Cell.Logg:
        return Relation.Gravity;
    }
  }

  /** Cells a relation holds, as Cell bits. */
  static cellsOf(relation: number): number {
    let out = 0;
    if (relation & Relation.StefanBoltzmann) out |= Cell.Luminosity | Cell.Radius | Cell.Teff;
    if (relation & Relation.Gravity) out |= Cell.Mass | Cell.Radius | Cell.Logg;
    if (relation & Relation.MassLuminosity) out |= Cell.Mass | Cell.Luminosity;
    return out;
  }

  /**
   * Whether the row can pin a wrong value on `cell` rather than on a neighbour: two of the
   * available relations hold the cell, or the one that does has every other cell vouched for by
   * another relation that holds as written (within `accept` sigma). A mass tested only by
   * g = GM/R^2 is never pinned, since the same miss could be the row's logg.
   */
  pins(cell: Cell, bits: number, accept: number): boolean {
    const own = RowRelations.involving(cell) & bits;
    if (own === 0) return false;
    if (own & (own - 1)) return true;
    const others = RowRelations.cellsOf(own) & ~cell;
    for (const o of [Cell.Mass, Cell.Radius, Cell.Luminosity, Cell.Teff, Cell.Logg]) {
      if (!(others & o)) continue;
      const vouch = RowRelations.involving(o) & bits & ~own;
      if (vouch === 0 || !(this.worstZ(vouch) <= accept)) return false;
    }
    return true;
  }

  /**
   * Whether a relation other than those in `exclude` holds `cell` and holds as written (within
   * `accept` sigma): the cell is then vouched for, and no other reading of it is entertained.
   */
  vouches(cell: Cell, exclude: number, accept: number): boolean {
    const bits = RowRelations.involving(cell) & this.available() & ~exclude;
    return bits !== 0 && this.worstZ(bits) <= accept;
  }

  private sbResidual(): number {
    return this.ll - 2 * this.lr - 4 * (this.lt - LOG_TEFF_SUN);
  }
  /**
   * Sigma of the Stefan-Boltzmann residual log L - 2 log R - 4 log(Teff/Teff_sun). `side` > 0
   * (L too high for R and Teff): L's lower error, R's and Teff's upper; < 0 the other sides; 0 the
   * mean of both sides, for the inverse-variance weights of `expectedFor`.
   */
  private sbSigma(side = 0): number {
    const sl = side > 0 ? this.slLo : side < 0 ? this.slHi : this.sl;
    const sr = side > 0 ? this.srHi : side < 0 ? this.srLo : this.sr;
    const st = side > 0 ? this.stHi : side < 0 ? this.stLo : this.st;
    return Math.sqrt(SB_FLOOR_DEX * SB_FLOOR_DEX + sl * sl + 4 * sr * sr + 16 * st * st);
  }
  private gravityResidual(): number {
    return this.g - LOGG_SUN - this.lm + 2 * this.lr;
  }
  /** Sigma of logg - (4.438 + log M - 2 log R); `side` > 0 (logg too high): logg's lower error, M's upper, R's lower. */
  private gravitySigma(side = 0): number {
    const s = this.gravityScatter;
    const sg = side > 0 ? this.sgLo : side < 0 ? this.sgHi : this.sg;
    const sm = side > 0 ? this.smHi : side < 0 ? this.smLo : this.sm;
    const sr = side > 0 ? this.srLo : side < 0 ? this.srHi : this.sr;
    return Math.sqrt(GRAVITY_FLOOR_DEX * GRAVITY_FLOOR_DEX + s * s + sg * sg + sm * sm + 4 * sr * sr);
  }

  /**
   * Largest |residual| / sigma over the relations in `bits` that the current values allow; 0 when
   * none applies. The mass-luminosity residual counts from the relation, or from the top of the
   * main-sequence brightening band above a ZAMS bound, as mass-luminosity-outlier judges it.
   */
  worstZ(bits: number): number {
    const has = Number.isFinite;
    let z = 0;
    if (bits & Relation.StefanBoltzmann && has(this.ll) && has(this.lr) && has(this.lt)) {
      const res = this.sbResidual();
      z = Math.max(z, Math.abs(res) / this.sbSigma(res));
    }
    if (bits & Relation.Gravity && has(this.g) && has(this.lm) && has(this.lr)) {
      const res = this.gravityResidual();
      z = Math.max(z, Math.abs(res) / this.gravitySigma(res));
    }
    if (bits & Relation.MassLuminosity && this.mainSequence && has(this.lm) && has(this.ll)) {
      const rel = this.rel;
      if (this.relationAtMass()) {
        let resid = this.ll - rel.logL;
        if (resid > 0) resid = Math.max(0, resid - rel.brightAllowance);
        // Above the relation: L's lower error and M's upper error face it.
        const sl = resid > 0 ? this.slLo : this.slHi;
        const sm = resid > 0 ? this.smHi : this.smLo;
        const sigma = Math.sqrt(rel.scatter * rel.scatter + sl * sl + rel.slope * rel.slope * sm * sm);
        z = Math.max(z, Math.abs(resid) / sigma);
      } else {
        // A shifted mass outside every relation's range cannot be judged consistent.
        z = Infinity;
      }
    }
    return z;
  }

  /** The relations among `bits` that the current values miss by more than `sigma`. */
  failing(bits: number, sigma: number): number {
    let out = 0;
    for (const r of [Relation.StefanBoltzmann, Relation.Gravity, Relation.MassLuminosity]) {
      if (bits & r && this.worstZ(r) > sigma) out |= r;
    }
    return out;
  }

  get(cell: Cell): number {
    switch (cell) {
      case Cell.Mass:
        return this.lm;
      case Cell.Radius:
        return this.lr;
      case Cell.Luminosity:
        return this.ll;
      case Cell.Teff:
        return this.lt;
      case Cell.Logg:
        return this.g;
    }
  }

  set(cell: Cell, v: number): void {
    switch (cell) {
      case Cell.Mass:
        this.lm = v;
        break;
      case Cell.Radius:
        this.lr = v;
        break;
      case Cell.Luminosity:
        this.ll = v;
        break;
      case Cell.Teff:
        this.lt = v;
        break;
      case Cell.Logg:
        this.g = v;
        break;
    }
  }

  /** worstZ with one cell replaced by `v`; the row is left as it was. */
  worstZWith(cell: Cell, v: number, bits: number): number {
    const keep = this.get(cell);
    this.set(cell, v);
    const z = this.worstZ(bits);
    this.set(cell, keep);
    return z;
  }

  /**
   * What the other values of the row imply for `cell` (log10, as the cell is held): the
   * inverse-variance mean over the relations that hold it, NaN when none does. The
   * mass-luminosity relation is inverted by a few Newton steps along its local slope.
   */
  expectedFor(cell: Cell): number {
    const has = Number.isFinite;
    let sw = 0;
    let swx = 0;
    const addTerm = (x: number, s: number) => {
      if (!has(x) || !(s > 0)) return;
      const w = 1 / (s * s);
      sw += w;
      swx += w * x;
    };
    const sb = has(this.ll) && has(this.lr) && has(this.lt);
    const gr = has(this.g) && has(this.lm) && has(this.lr);
    if (sb) {
      const s = this.sbSigma();
      const res = this.sbResidual();
      if (cell === Cell.Luminosity) addTerm(this.ll - res, s);
      else if (cell === Cell.Radius) addTerm(this.lr + res / 2, s / 2);
      else if (cell === Cell.Teff) addTerm(this.lt + res / 4, s / 4);
    }
    if (gr) {
      const s = this.gravitySigma();
      const res = this.gravityResidual();
      if (cell === Cell.Logg) addTerm(this.g - res, s);
      else if (cell === Cell.Mass) addTerm(this.lm + res, s);
      else if (cell === Cell.Radius) addTerm(this.lr - res / 2, s / 2);
    }
    if (this.mainSequence && has(this.lm) && has(this.ll) && (cell === Cell.Mass || cell === Cell.Luminosity)) {
      const rel = this.rel;
      if (cell === Cell.Luminosity) {
        if (this.relationAtMass()) addTerm(rel.logL + rel.brightAllowance / 2, rel.scatter);
      } else {
        // The inversion fills `rel` at other masses: what it holds no longer belongs to lm.
        this.relLm = NaN;
        const x = invertMassLuminosity(this.ll, rel);
        if (Number.isFinite(x)) addTerm(x, rel.scatter / rel.slope);
      }
    }
    return sw > 0 ? swx / sw : NaN;
  }
}

/**
 * log10 M (M_sun) at which the default main-sequence relation gives log L = `logL` (the middle of
 * the brightening band above a ZAMS bound), by Newton steps along the relation's local slope from
 * the solar-slope guess; NaN when no mass in 0.1-100 M_sun gets within 0.1 dex (the relation steps
 * by up to 0.08 dex at its segment breaks). `rel` is left filled at the mass found.
 */
export function invertMassLuminosity(logL: number, rel: RelationVerdictInput): number {
  if (!Number.isFinite(logL)) return NaN;
  let x = Math.min(2, Math.max(-1, logL / 4));
  for (let step = 0; step < 8; step++) {
    if (!relationAt('default', Math.pow(10, x), rel) || !(rel.slope > 0)) return NaN;
    const miss = logL - (rel.logL + rel.brightAllowance / 2);
    if (Math.abs(miss) < 0.01) return x;
    x = Math.min(2, Math.max(-1, x + miss / rel.slope));
  }
  if (!relationAt('default', Math.pow(10, x), rel)) return NaN;
  return Math.abs(logL - (rel.logL + rel.brightAllowance / 2)) < 0.1 ? x : NaN;
}

/** The batch's usable columns that feed RowRelations, gathered once per batch. */
export class RowInputs {
  readonly mass: Float64Array | null;
  readonly radius: Float64Array | null;
  readonly luminosity: Float64Array | null;
  readonly teff: Float64Array | null;
  readonly logg: Float64Array | null;
  readonly classes: Uint8Array;
  readonly scatter: number;

  private readonly dex: (DexColumns | null)[];

  constructor(
    readonly batch: Batch,
    classes: Uint8Array,
  ) {
    const q = batch.quantities;
    // Mass, radius, luminosity, Teff: logs and side errors in dex, shared by every rule of the batch.
    this.dex = [q.mass, q.radius, q.luminosity, q.teff].map((c) => (c ? dexColumns(c) : null));
    this.mass = usableValues(batch, 'mass');
    this.radius = usableValues(batch, 'radius');
    this.luminosity = usableValues(batch, 'luminosity');
    this.teff = usableValues(batch, 'teff');
    this.logg = usableValues(batch, 'logg');
    this.classes = classes;
    this.scatter = gravityScatter(batch);
  }

  /** Fills `rr` with row i: logs of the positive values, their errors in dex, the class. */
  load(rr: RowRelations, i: number): void {
    const q = this.batch.quantities;
    rr.reset();
    rr.gravityScatter = this.scatter;
    rr.mainSequence = this.classes[i] === StarClass.MainSequence;
    const m = this.mass ? this.mass[i] : NaN;
    const r = this.radius ? this.radius[i] : NaN;
    const l = this.luminosity ? this.luminosity[i] : NaN;
    const t = this.teff ? this.teff[i] : NaN;
    const [dm, dr, dl, dt] = this.dex;
    if (m > 0) {
      rr.lm = dm!.log[i];
      rr.smLo = dm!.lo[i];
      rr.smHi = dm!.hi[i];
    }
    if (r > 0) {
      rr.lr = dr!.log[i];
      rr.srLo = dr!.lo[i];
      rr.srHi = dr!.hi[i];
    }
    if (l > 0) {
      rr.ll = dl!.log[i];
      rr.slLo = dl!.lo[i];
      rr.slHi = dl!.hi[i];
    }
    if (t > 0) {
      rr.lt = dt!.log[i];
      rr.stLo = dt!.lo[i];
      rr.stHi = dt!.hi[i];
    }
    const g = this.logg ? this.logg[i] : NaN;
    if (Number.isFinite(g)) {
      rr.g = g;
      const col = q.logg!;
      // A one-sided error stands for both sides, as meanErr reads it.
      const lo = col.errLo ? col.errLo[i] : NaN;
      const hi = col.errHi ? col.errHi[i] : NaN;
      rr.sgLo = Number.isFinite(lo) ? lo : Number.isFinite(hi) ? hi : 0;
      rr.sgHi = Number.isFinite(hi) ? hi : Number.isFinite(lo) ? lo : 0;
    }
  }
}

/** A column's values as log10 (NaN where not positive) and its lower and upper errors in dex. */
interface DexColumns {
  log: Float64Array;
  lo: Float64Array;
  hi: Float64Array;
}

/** Computed once per column of a batch: the rules that relate rows read them again and again. */
const dexCache = new WeakMap<QuantityColumn, DexColumns>();

function dexColumns(col: QuantityColumn): DexColumns {
  const hit = dexCache.get(col);
  if (hit) return hit;
  const n = col.value.length;
  const d: DexColumns = { log: new Float64Array(n), lo: new Float64Array(n), hi: new Float64Array(n) };
  for (let i = 0; i < n; i++) {
    const v = col.value[i];
    d.log[i] = v > 0 ? Math.log10(v) : NaN;
    d.lo[i] = sideDexErr(col, i, false);
    d.hi[i] = sideDexErr(col, i, true);
  }
  dexCache.set(col, d);
  return d;
}

/**
 * The error of row i of a linear quantity in dex on one side (`upper` or lower): the log errors
 * where the column keeps them (luminosity), else the error over the value (first order). Where only
 * one side is stated it stands for both, as meanErr reads it; 0 where none is.
 */
export function sideDexErr(col: QuantityColumn, i: number, upper: boolean): number {
  const lo = col.logErrLo || col.logErrHi ? col.logErrLo : col.errLo;
  const hi = col.logErrLo || col.logErrHi ? col.logErrHi : col.errHi;
  const a = lo ? lo[i] : NaN;
  const b = hi ? hi[i] : NaN;
  const e = upper ? (Number.isFinite(b) ? b : a) : Number.isFinite(a) ? a : b;
  if (!Number.isFinite(e) || !(e > 0)) return 0;
  if (col.logErrLo || col.logErrHi) return e;
  const v = col.value[i];
  return v > 0 ? e / (v * Math.LN10) : 0;
}
