/**
 * Column binding: which catalog column is which quantity, in which unit, and why; then raw batches
 * to canonical engine batches. Trust runs from the user's options, through the file's metadata
 * (unit, UCD), a unit written in the header, to the header name alone; a unit nobody declared is
 * inferred from the sample values and said so in the notes. Ambiguity is an error, never a guess.
 */
import { LOGG_SUN, TEFF_SUN_K } from '../../rules/physics/constants.js';
import { EKER_2018 } from '../../rules/physics/mass-luminosity.js';
import {
  NUMERIC_QUANTITIES,
  QUANTITY_INFO,
  isNumericQuantity,
  isQuantity,
  type NumericQuantity,
  type Quantity,
  type TextQuantity,
} from '../../rules/engine/quantities.js';
import type { Batch, InputProblem, QuantityColumn, TextColumn } from '../../rules/engine/types.js';
import type { ColumnMeta, RawBatch } from '../readers/types.js';
import { readNumbers, readText } from './cells.js';
import { convertErrorSide, convertValues, errorSpec, quantityUnit, valueSpec, type ErrorSpec, type ValueSpec } from './convert.js';
import { guessName, guessNames, type NameGuess, type NameRole } from './names.js';
import {
  BindingError,
  type Binding,
  type BindOptions,
  type ColumnBinding,
  type ErrorBinding,
  type QuantitySource,
  type UnitSource,
} from './types.js';
import { DIMENSION_UNIT, QUANTITY_DIMENSION, isNoUnit, parseUnit, type QuantityUnit } from './units.js';

// ---------------------------------------------------------------------------------------------
// Scores: an explicit option beats metadata, metadata beats any name.

const SCORE_OPTION = 1000;
const SCORE_UCD = 200;
const SCORE_UCD_MAIN = 250;

/** Quantities are settled in this order so each can lean on those before it (L on R, Teff, M). */
const VALUE_ORDER: readonly NumericQuantity[] = [
  'teff',
  'mass',
  'logg',
  'radius',
  'luminosity',
  'feh',
  'parallax',
  'distance',
  'mbol',
  'hydrogenFraction',
];

const TEXT_QUANTITIES: readonly TextQuantity[] = ['id', 'stage'];

/** Rows of evidence below which a vote between readings says nothing. */
const MIN_VOTES = 3;

// ---------------------------------------------------------------------------------------------
// UCDs (IVOA UCD1+): the words that name our quantities.

interface UcdInfo {
  quantity: Quantity;
  error: boolean;
  main: boolean;
  ucd: string;
}

const UCD_WORDS: Readonly<Record<string, Quantity>> = {
  'phys.mass': 'mass',
  'phys.luminosity': 'luminosity',
  'phys.size.radius': 'radius',
  'phys.temperature.effective': 'teff',
  'phys.gravity': 'logg',
  'phys.abund.fe': 'feh',
  'phys.abund.z': 'feh',
  'pos.parallax': 'parallax',
  'pos.parallax.trig': 'parallax',
  'pos.distance': 'distance',
  'phys.magabs.bol': 'mbol',
  'meta.id': 'id',
  'src.sptype': 'stage',
  'src.class.luminosity': 'stage',
  'src.class.stage': 'stage',
};

function ucdInfo(ucd: string | null): UcdInfo | null {
  if (!ucd) return null;
  const words = ucd
    .split(';')
    .map((w) => w.trim().toLowerCase())
    .filter(Boolean);
  if (words.length === 0) return null;
  const error = words[0] === 'stat.error' || words[0] === 'stat.stdev' || words[0].startsWith('stat.error.');
  const primary = error ? words[1] : words[0];
  if (primary === undefined || !Object.hasOwn(UCD_WORDS, primary)) return null;
  const quantity = UCD_WORDS[primary];
  // A band luminosity (`phys.luminosity;em.X-ray`) is not the bolometric one the rules compare.
  if (quantity === 'luminosity' && words.some((w) => w.startsWith('em.'))) return null;
  return { quantity, error, main: words.includes('meta.main'), ucd: ucd.trim() };
}

// ---------------------------------------------------------------------------------------------
// Options

interface OptionRole {
  quantity: Quantity;
  role: NameRole;
}

const ROLE_SUFFIX: Readonly<Record<string, NameRole>> = {
  err: 'sym',
  error: 'sym',
  errlo: 'lo',
  lo: 'lo',
  errhi: 'hi',
  hi: 'hi',
};

function quantityNamed(name: string): Quantity | null {
  if (isQuantity(name)) return name;
  const lower = name.toLowerCase();
  for (const q of [...NUMERIC_QUANTITIES, ...TEXT_QUANTITIES]) if (q.toLowerCase() === lower) return q;
  return null;
}

/** The --unit value for a column; own keys only, so a column called `constructor` is just a name. */
function optionUnit(options: BindOptions, column: string): string | null {
  return Object.hasOwn(options.units, column) ? options.units[column] : null;
}

/** A role the way --bind spells it: `mass`, `mass.err`, `mass.errLo`, `mass.errHi`. */
function roleText(r: OptionRole): string {
  return r.role === 'value' ? r.quantity : `${r.quantity}.${r.role === 'sym' ? 'err' : r.role === 'lo' ? 'errLo' : 'errHi'}`;
}

function parseOptionRole(column: string, text: string): OptionRole | 'none' {
  const t = text.trim();
  if (t === 'none') return 'none';
  const m = /^([A-Za-z]+)(?:\.([A-Za-z]+))?$/.exec(t);
  const q = m ? quantityNamed(m[1]) : null;
  const suffix = m?.[2]?.toLowerCase();
  const role: NameRole | undefined = suffix === undefined ? 'value' : Object.hasOwn(ROLE_SUFFIX, suffix) ? ROLE_SUFFIX[suffix] : undefined;
  if (!q || !role || (role !== 'value' && !isNumericQuantity(q))) {
    throw new BindingError(
      `--bind ${column}=${text}: \`${text}\` is not a role; use a quantity (${[...NUMERIC_QUANTITIES, ...TEXT_QUANTITIES].join(', ')}), ` +
        `an uncertainty such as mass.err, mass.errLo or mass.errHi, or none`,
      column,
    );
  }
  return { quantity: q, role };
}

// ---------------------------------------------------------------------------------------------
// Small numeric helpers for the sample

function finiteValues(a: Float64Array): Float64Array {
  let n = 0;
  for (let i = 0; i < a.length; i++) if (Number.isFinite(a[i])) n++;
  const out = new Float64Array(n);
  let k = 0;
  for (let i = 0; i < a.length; i++) if (Number.isFinite(a[i])) out[k++] = a[i];
  return out;
}

function median(a: Float64Array): number {
  if (a.length === 0) return NaN;
  const s = Float64Array.from(a).sort();
  const h = s.length >> 1;
  return s.length % 2 ? s[h] : (s[h - 1] + s[h]) / 2;
}

function fmt(x: number): string {
  if (!Number.isFinite(x)) return String(x);
  const a = Math.abs(x);
  return a !== 0 && (a >= 1e5 || a < 1e-3) ? x.toExponential(2) : String(Number(x.toPrecision(4)));
}

/** Catalog fill values; a negative among these says nothing about log vs linear. */
const SENTINELS = new Set([-1, -9, -99, -999, -9999, -99999, -9.99, -99.9, -99.99]);

/**
 * Negative values mean log (linear L, M, R are positive), but only when there are enough of them
 * that are not fill values: one `-99` in a linear column is a sentinel, not a convention.
 */
function negativeEvidence(vals: Float64Array): { says: boolean; count: number } {
  let count = 0;
  for (let i = 0; i < vals.length; i++) if (vals[i] < 0 && !SENTINELS.has(vals[i])) count++;
  return { says: count >= Math.max(2, 0.01 * vals.length), count };
}

// ---------------------------------------------------------------------------------------------

interface Candidate {
  index: number;
  column: string;
  quantity: Quantity;
  role: NameRole;
  source: QuantitySource;
  score: number;
  guess: NameGuess;
  ucd: string | null;
  /** For an uncertainty: the index of its value column, once known. */
  base: number | null;
}

interface Resolved {
  unit: string;
  source: UnitSource;
  phrase: string;
  qu: QuantityUnit;
}

interface Chosen {
  cand: Candidate;
  resolved: Resolved | null;
  errors: ErrorBinding[];
}

interface Ambiguity {
  quantity: Quantity;
  columns: string[];
  why: string;
}

/** Inference outcome before it becomes a Resolved. */
interface Inferred {
  unit: string;
  source: 'inferred' | 'none';
  why: string;
}

class Binder {
  private readonly names: string[];
  private readonly indexOf = new Map<string, number>();
  private readonly guesses: NameGuess[];
  private readonly optionRoles = new Map<number, OptionRole | 'none'>();
  private readonly candidates: Candidate[] = [];
  private readonly chosen = new Map<Quantity, Chosen>();
  private readonly notes: string[] = [];
  private readonly ambiguities: Ambiguity[] = [];
  private readonly rawCache = new Map<number, Float64Array>();
  private readonly canonCache = new Map<Quantity, Float64Array>();

  constructor(
    private readonly meta: readonly ColumnMeta[],
    private readonly sample: RawBatch | null,
    private readonly options: BindOptions,
  ) {
    this.names = meta.map((m) => m.name);
    this.names.forEach((n, i) => {
      if (!this.indexOf.has(n)) this.indexOf.set(n, i);
    });
    this.guesses = guessNames(this.names);
  }

  run(): Binding {
    this.readOptions();
    this.collectCandidates();
    for (const q of VALUE_ORDER) {
      try {
        this.chooseValue(q);
      } catch (e) {
        // Once a quantity is ambiguous, later ones may fail only because they could not lean on
        // it (L without a mass to compare with); the ambiguity is the error to report.
        if (!(e instanceof BindingError) || this.ambiguities.length === 0) throw e;
      }
    }
    if (this.ambiguities.length > 0) this.throwAmbiguity();
    for (const q of TEXT_QUANTITIES) this.chooseText(q);
    for (const c of this.candidates) {
      if (c.source === 'option' && c.role !== 'value' && !this.chosen.has(c.quantity)) {
        throw new BindingError(
          `--bind ${c.column}=${roleText(c)} gives an uncertainty of ${c.quantity}, ` +
            `but no column is bound to ${c.quantity}; bind one with --bind COLUMN=${c.quantity}`,
          c.column,
        );
      }
    }
    for (const q of VALUE_ORDER) this.attachErrors(q);
    this.notePlanets();

    const columns: ColumnBinding[] = [];
    for (const q of [...TEXT_QUANTITIES, ...VALUE_ORDER]) {
      const c = this.chosen.get(q);
      if (!c) continue;
      columns.push({
        quantity: q,
        column: c.cand.column,
        columnIndex: c.cand.index,
        unit: c.resolved?.unit ?? '',
        quantitySource: c.cand.source,
        unitSource: c.resolved?.source ?? 'none',
        reason: this.reason(c),
        errors: c.errors,
      });
    }
    columns.sort((a, b) => a.columnIndex - b.columnIndex);
    return { columns, notes: this.notes };
  }

  // -- options -----------------------------------------------------------------------------

  private column(name: string, option: string): number {
    const i = this.indexOf.get(name);
    if (i === undefined) {
      throw new BindingError(`${option} names column \`${name}\`, which is not in the file (columns: ${this.listColumns()})`, name);
    }
    return i;
  }

  private listColumns(): string {
    const shown = this.names.slice(0, 12).join(', ');
    return this.names.length > 12 ? `${shown}, ... ${this.names.length - 12} more` : shown;
  }

  private readOptions(): void {
    const valueOwner = new Map<string, string>();
    for (const [col, role] of Object.entries(this.options.bind)) {
      const i = this.column(col, '--bind');
      const r = parseOptionRole(col, role);
      this.optionRoles.set(i, r);
      if (r === 'none') continue;
      const key = roleText(r);
      const prev = valueOwner.get(key);
      if (prev !== undefined) throw new BindingError(`--bind gives ${key} to both \`${prev}\` and \`${col}\`; bind one of them`, col);
      valueOwner.set(key, col);
    }
    for (const [col, unit] of Object.entries(this.options.units)) {
      const i = this.column(col, '--unit');
      // Checked now, so a typo in a unit fails even when the column ends up unbound.
      const role = this.optionRoles.get(i);
      const q = role && role !== 'none' ? role.quantity : this.guesses[i].quantity;
      const hint = q && isNumericQuantity(q) ? q : null;
      if (hint) quantityUnit(hint, unit, col, 'from --unit');
      else checkUnitText(unit, col);
    }
  }

  // -- candidates --------------------------------------------------------------------------

  private collectCandidates(): void {
    for (let i = 0; i < this.names.length; i++) {
      const column = this.names[i];
      const guess = this.guesses[i];
      const opt = this.optionRoles.get(i);
      if (opt === 'none') continue;
      if (opt) {
        this.candidates.push({ index: i, column, quantity: opt.quantity, role: opt.role, source: 'option', score: SCORE_OPTION, guess, ucd: null, base: null });
        continue;
      }
      // Planet columns are never stellar quantities; only a planet name may stand in as the id.
      if (guess.planet && guess.quantity !== 'id') continue;
      const u = ucdInfo(this.meta[i].ucd);
      if (u) {
        const role: NameRole = u.error ? (guess.role !== 'value' ? guess.role : 'sym') : 'value';
        this.candidates.push({
          index: i,
          column,
          quantity: u.quantity,
          role,
          source: 'ucd',
          score: u.main ? SCORE_UCD_MAIN : SCORE_UCD,
          guess,
          ucd: u.ucd,
          base: null,
        });
        continue;
      }
      if (guess.quantity) {
        this.candidates.push({ index: i, column, quantity: guess.quantity, role: guess.role, source: 'name', score: guess.score, guess, ucd: null, base: null });
      }
    }
    for (const c of this.candidates) {
      if (c.role === 'value' || c.source === 'option') continue;
      if (c.guess.role !== 'value' && c.guess.base !== null) {
        const b = this.indexOf.get(c.guess.base);
        if (b !== undefined && b !== c.index) c.base = b;
      }
      if (c.base === null && c.source === 'ucd') c.base = this.adjacentValue(c);
    }
  }

  /** VizieR puts `e_X` right after `X`: a UCD uncertainty without a name match takes the nearest value before it. */
  private adjacentValue(c: Candidate): number | null {
    for (let j = c.index - 1; j >= Math.max(0, c.index - 3); j--) {
      if (this.candidates.some((v) => v.index === j && v.role === 'value' && v.quantity === c.quantity)) return j;
    }
    return null;
  }

  // -- values ------------------------------------------------------------------------------

  private chooseValue(q: NumericQuantity): void {
    const cands = this.candidates.filter((c) => c.quantity === q && c.role === 'value');
    if (cands.length === 0) return;
    const top = Math.max(...cands.map((c) => c.score));
    const tops = cands.filter((c) => c.score === top);
    const rest = cands.filter((c) => c.score !== top);
    let pick: { cand: Candidate; resolved: Resolved } | null = null;
    if (tops.length === 1) {
      pick = { cand: tops[0], resolved: this.resolveUnit(tops[0], q) };
    } else {
      const resolved = tops.map((c) => ({ cand: c, resolved: this.resolveUnit(c, q) }));
      pick = this.sameValuesTwice(q, resolved);
      if (!pick) {
        this.ambiguities.push({ quantity: q, columns: tops.map((c) => c.column), why: 'and neither ranks higher' });
        return;
      }
    }
    this.chosen.set(q, { cand: pick.cand, resolved: pick.resolved, errors: [] });
    if (rest.length > 0) {
      const lost = rest.map((c) => `\`${c.column}\``).join(', ');
      const why =
        pick.cand.source === 'option'
          ? 'chosen with --bind'
          : pick.cand.source === 'ucd' && rest.every((c) => c.source !== 'ucd')
            ? 'its UCD outranks a name'
            : rest.every((c) => c.guess.decoration !== null)
              ? 'a plain name outranks a decorated one'
              : 'its name ranks higher';
      this.notes.push(`${lost} also ${rest.length > 1 ? 'look' : 'looks'} like ${QUANTITY_INFO[q].label}; \`${pick.cand.column}\` was bound (${why}).`);
    }
  }

  /**
   * PHL's `S_LOG_LUM` beside `S_LUMINOSITY`, the RSG table's `log(R/R.)` beside `R*`: one quantity
   * written twice, log and linear. When the sample shows the same values, bind one (the one with
   * uncertainties, else the linear one) and say so; otherwise it stays ambiguous.
   */
  private sameValuesTwice(q: NumericQuantity, tops: { cand: Candidate; resolved: Resolved }[]): { cand: Candidate; resolved: Resolved } | null {
    if (tops.length !== 2) return null;
    const [a, b] = tops;
    if (a.resolved.qu.log === b.resolved.qu.log) return null;
    const la = this.sampleLog(a.cand, a.resolved);
    const lb = this.sampleLog(b.cand, b.resolved);
    if (!la || !lb) return null;
    let n = 0;
    let agree = 0;
    for (let i = 0; i < la.length; i++) {
      if (!Number.isFinite(la[i]) || !Number.isFinite(lb[i])) continue;
      n++;
      if (Math.abs(la[i] - lb[i]) < 0.01) agree++;
    }
    // Log and linear agreeing to 0.01 dex by chance is rare enough that even one row counts.
    if (n === 0 || agree < 0.9 * n) return null;
    const hasErrors = (c: Candidate) => this.candidates.some((e) => e.role !== 'value' && e.base === c.index);
    const ea = hasErrors(a.cand);
    const eb = hasErrors(b.cand);
    const pick = ea !== eb ? (ea ? a : b) : a.resolved.qu.log ? b : a;
    const other = pick === a ? b : a;
    this.notes.push(
      `\`${other.cand.column}\` repeats \`${pick.cand.column}\` (${agree} of ${n} sample rows agree within 0.01 dex, one log and one linear); ` +
        `\`${pick.cand.column}\` was bound as ${QUANTITY_INFO[q].label}${ea !== eb ? ' because it has uncertainty columns' : ''}.`,
    );
    return pick;
  }

  private sampleLog(c: Candidate, r: Resolved): Float64Array | null {
    const raw = this.sampleRaw(c.index);
    if (!raw || !isNumericQuantity(c.quantity)) return null;
    const spec = valueSpec(c.quantity, r.unit, c.column);
    const v = new Float64Array(raw.length);
    convertValues(raw, spec, v, null);
    if (spec.cls === 'linear') for (let i = 0; i < v.length; i++) v[i] = Math.log10(v[i]);
    return v;
  }

  private throwAmbiguity(): never {
    const parts = this.ambiguities.map((a) => {
      const cols = a.columns.map((c) => `\`${c}\``);
      const two = cols.length === 2;
      const list = two ? `${cols[0]} and ${cols[1]}` : `${cols.slice(0, -1).join(', ')} and ${cols[cols.length - 1]}`;
      const label = isNumericQuantity(a.quantity) ? QUANTITY_INFO[a.quantity].label : a.quantity;
      return (
        `${list} ${two ? 'both' : 'all'} look like ${label} ${a.why}; choose with --bind ${a.columns[0]}=${a.quantity} ` +
        `and set ${two ? 'the other' : 'the others'} aside with --bind ${a.columns[1]}=none`
      );
    });
    throw new BindingError(`ambiguous binding: ${parts.join('; ')}`, this.ambiguities[0].columns[0]);
  }

  // -- units -------------------------------------------------------------------------------

  private resolveUnit(c: Candidate, q: NumericQuantity): Resolved {
    // What the name says about unit and log only counts when the name meant this quantity.
    const g = c.guess.role === 'value' && c.guess.quantity === q ? c.guess : null;
    const nameSaysLog = g?.log === true;

    const optUnit = optionUnit(this.options, c.column);
    if (optUnit !== null) return this.declared(c, q, optUnit, 'option', false);

    const metaUnit = this.meta[c.index].unit;
    if (!isNoUnit(metaUnit)) return this.declared(c, q, (metaUnit as string).trim(), 'metadata', nameSaysLog);

    if (g && g.unit !== null) {
      const qu = quantityUnit(q, g.unit, c.column, 'written in the header');
      const log = qu.log || g.log;
      const unit = log && !qu.log ? `log(${qu.unit})` : qu.unit;
      const hint = g.unitHint ?? g.unit;
      const dot = /\b([LMR])\.(?=\)|$)/.exec(hint);
      const where =
        g.unitPlace === 'suffix'
          ? `from the name suffix \`${hint}\``
          : g.unitPlace === 'whole'
            ? 'because the name is the unit'
            : `from \`${hint}\` in the name${dot ? ` (\`${dot[1]}.\` read as ${dot[1]}_sun)` : ''}`;
      return { unit, source: 'header', phrase: `unit ${unit} ${where}`, qu: { ...qu, log, unit } };
    }

    if (q === 'feh') return this.byName(q, 'dex', 'unit dex, as [Fe/H] is by definition');
    if (q === 'mbol') return this.byName(q, 'mag', 'unit mag, as a bolometric magnitude is by definition');

    const raw = this.sampleRaw(c.index);
    const vals = raw ? finiteValues(raw) : new Float64Array(0);

    if (nameSaysLog) {
      const med = median(vals);
      if (q === 'logg' && med > 100) return this.inferredUnit(c, q, { unit: 'cm.s-2', source: 'inferred', why: `median ${fmt(med)}, impossible for log g, so linear g in cgs` });
      if (q === 'luminosity' && med > 31 && med < 40) return this.inferredUnit(c, q, { unit: 'log(erg/s)', source: 'inferred', why: `the name says log and the median ${fmt(med)} is log10 of erg/s` });
      if (q === 'luminosity' && med > 24 && med < 30) return this.inferredUnit(c, q, { unit: 'log(W)', source: 'inferred', why: `the name says log and the median ${fmt(med)} is log10 of watts` });
      const unit = `log(${DIMENSION_UNIT[QUANTITY_DIMENSION[q]]})`;
      return this.byName(q, unit, `unit ${unit}, as the name marks a log value`);
    }
    if (vals.length === 0) {
      return this.inferredUnit(c, q, { unit: this.defaultUnit(q), source: 'none', why: raw ? 'the sample has no values in this column' : 'there is no sample to check' });
    }
    return this.inferredUnit(c, q, this.infer(c, q, vals, raw as Float64Array));
  }

  private defaultUnit(q: NumericQuantity): string {
    return q === 'logg' ? 'log(cm.s-2)' : QUANTITY_INFO[q].unit;
  }

  private byName(q: NumericQuantity, unit: string, phrase: string): Resolved {
    return { unit, source: 'name', phrase, qu: quantityUnit(q, unit, '', 'by name') };
  }

  /** A unit the user or the file declared. */
  private declared(c: Candidate, q: NumericQuantity, text: string, source: 'option' | 'metadata', nameSaysLog: boolean): Resolved {
    const qu = quantityUnit(q, text, c.column, source === 'option' ? 'from --unit' : "from the file's metadata");
    let unit = qu.unit;
    let log = qu.log;
    if (source === 'metadata' && nameSaysLog && !qu.log && QUANTITY_DIMENSION[q] !== 'dex') {
      // Tables label a log L column `Lsun` (and log g `cm/s2`) more often than they write the log; the name breaks the tie.
      log = true;
      unit = `log(${qu.unit})`;
      this.notes.push(`\`${c.column}\`: the metadata says \`${text}\` but the name marks a log value; read as ${unit}.`);
    }
    const orig = text !== unit ? ` (\`${text}\`)` : '';
    const phrase = source === 'option' ? `unit ${unit} from --unit` : `unit ${unit} from the file's metadata${orig}`;
    return { unit, source, phrase, qu: { ...qu, log, unit } };
  }

  private inferredUnit(c: Candidate, q: NumericQuantity, inf: Inferred): Resolved {
    const qu = quantityUnit(q, inf.unit, c.column, 'inferred');
    if (inf.source === 'none') {
      this.notes.push(`\`${c.column}\`: no unit declared and ${inf.why}; assumed ${inf.unit}.`);
      return { unit: qu.unit, source: 'none', phrase: `unit ${qu.unit} assumed (${inf.why})`, qu };
    }
    this.notes.push(`\`${c.column}\`: no unit declared; ${qu.unit} inferred from the values: ${inf.why}.`);
    return { unit: qu.unit, source: 'inferred', phrase: `unit ${qu.unit} inferred from the values`, qu };
  }

  private infer(c: Candidate, q: NumericQuantity, vals: Float64Array, raw: Float64Array): Inferred {
    const med = median(vals);
    const inferred = (unit: string, why: string): Inferred => ({ unit, source: 'inferred', why });
    switch (q) {
      case 'teff':
        if (med >= 2.3 && med <= 4.8) return inferred('log(K)', `median ${fmt(med)} lies in 2.3-4.8, where only log Teff falls`);
        if (med > 4.8 && med <= 200) return inferred('kK', `median ${fmt(med)} is too low for kelvin and fits kK`);
        return inferred('K', `median ${fmt(med)} fits kelvin`);
      case 'logg':
        if (med > 100) return inferred('cm.s-2', `median ${fmt(med)}, impossible for log g, so linear g in cgs`);
        return inferred('log(cm.s-2)', `median ${fmt(med)} fits log g in cgs`);
      case 'mass': {
        const neg = negativeEvidence(vals);
        if (neg.says) return inferred('log(solMass)', `${neg.count} negative values, impossible for a linear mass`);
        if (med > 1e31) return inferred('g', `median ${fmt(med)} matches grams (M_sun = 1.989e33 g)`);
        if (med > 1e26) return inferred('kg', `median ${fmt(med)} matches kilograms (M_sun = 1.989e30 kg)`);
        if (med > 500) {
          throw new BindingError(
            `column \`${c.column}\`: mass values (median ${fmt(med)}) are too large for solar masses and too small for kg; ` +
              `declare the unit, e.g. --unit ${c.column}=jupiterMass`,
            c.column,
          );
        }
        return inferred('solMass', `median ${fmt(med)} fits solar masses`);
      }
      case 'radius':
        return this.inferRadius(c, vals, raw, med);
      case 'luminosity':
        return this.inferLuminosity(c, vals, raw, med);
      case 'distance':
        return this.inferDistance(c, raw) ?? { unit: 'pc', source: 'none', why: 'distances are in pc by convention and nothing here says otherwise' };
      case 'parallax':
        return { unit: 'mas', source: 'none', why: 'parallaxes are in mas by convention and nothing here says otherwise' };
      case 'hydrogenFraction':
        return med > 1 ? inferred('%', `median ${fmt(med)} is above 1, so per cent`) : inferred('', `median ${fmt(med)} fits a mass fraction`);
      default:
        return { unit: this.defaultUnit(q), source: 'none', why: 'nothing to infer it from' };
    }
  }

  private inferRadius(c: Candidate, vals: Float64Array, raw: Float64Array, med: number): Inferred {
    const neg = negativeEvidence(vals);
    if (neg.says) return { unit: 'log(solRad)', source: 'inferred', why: `${neg.count} negative values, impossible for a linear radius` };
    // The largest known stars are about 2000 R_sun; beyond that the numbers are in a length unit.
    if (med <= 3000) return { unit: 'solRad', source: 'inferred', why: `median ${fmt(med)} fits solar radii` };
    const lengths: [string, number][] = [
      ['km', 1e3 / 6.957e8],
      ['m', 1 / 6.957e8],
      ['cm', 1e-2 / 6.957e8],
    ];
    const mass = this.sampleCanonical('mass');
    const logg = this.sampleCanonical('logg');
    if (mass && logg) {
      const off = (f: number) => {
        const d: number[] = [];
        for (let i = 0; i < raw.length; i++) {
          const ref = 0.5 * (Math.log10(mass[i]) + LOGG_SUN - logg[i]);
          const v = Math.log10(raw[i] * f);
          if (Number.isFinite(ref) && Number.isFinite(v)) d.push(v - ref);
        }
        return d.length >= MIN_VOTES ? Math.abs(median(Float64Array.from(d))) : Infinity;
      };
      const best = lengths.map(([u, f]) => ({ u, d: off(f) })).sort((a, b) => a.d - b.d)[0];
      if (best.d < 0.5) {
        return { unit: best.u, source: 'inferred', why: `median ${fmt(med)} is too large for solar radii; in ${best.u} it agrees with the radius from mass and log g` };
      }
    }
    const closest = lengths.map(([u, f]) => ({ u, d: Math.abs(Math.log10(med * f)) })).sort((a, b) => a.d - b.d)[0];
    return { unit: closest.u, source: 'inferred', why: `median ${fmt(med)} is too large for solar radii and gives stellar sizes in ${closest.u}` };
  }

  /**
   * Expected log L per sample row: Stefan-Boltzmann from R and Teff where both are bound and
   * present, else Eker et al. 2018 from the mass (inside its 0.179-31 M_sun range, NaN outside).
   */
  private referenceLogL(): { logL: Float64Array; tol: Float64Array; what: string } | null {
    const r = this.sampleCanonical('radius');
    const t = this.sampleCanonical('teff');
    const m = this.sampleCanonical('mass');
    if (!(r && t) && !m) return null;
    const n = (r ?? t ?? m)!.length;
    const logL = new Float64Array(n).fill(NaN);
    const tol = new Float64Array(n);
    let sb = 0;
    let ml = 0;
    for (let i = 0; i < n; i++) {
      if (r && t && r[i] > 0 && t[i] > 0) {
        logL[i] = 2 * Math.log10(r[i]) + 4 * Math.log10(t[i] / TEFF_SUN_K);
        tol[i] = 0.5;
        sb++;
      } else if (m && m[i] > 0) {
        const e = EKER_2018.logL(m[i]);
        if (Number.isFinite(e)) {
          logL[i] = e;
          // Main-sequence relation: giants stray far, so a wider window.
          tol[i] = 0.7;
          ml++;
        }
      }
    }
    const parts: string[] = [];
    if (sb > 0) parts.push(`Stefan-Boltzmann from \`${this.chosen.get('radius')!.cand.column}\` and \`${this.chosen.get('teff')!.cand.column}\``);
    if (ml > 0) parts.push(`Eker et al. 2018 from \`${this.chosen.get('mass')!.cand.column}\``);
    return parts.length > 0 ? { logL, tol, what: parts.join(' and ') } : null;
  }

  private inferLuminosity(c: Candidate, vals: Float64Array, raw: Float64Array, med: number): Inferred {
    const inferred = (unit: string, why: string): Inferred => ({ unit, source: 'inferred', why });
    // Between W and erg/s lies a factor 1e7; no star is below 1e-4 L_sun, so the bands do not touch.
    if (med > 1e30) return inferred('erg/s', `median ${fmt(med)} matches erg/s (L_sun = 3.828e33 erg/s)`);
    if (med > 1e20) return inferred('W', `median ${fmt(med)} matches watts (L_sun = 3.828e26 W)`);

    const ref = this.referenceLogL();
    let asLog = 0;
    let asLin = 0;
    let comparable = 0;
    if (ref) {
      for (let i = 0; i < raw.length; i++) {
        const v = raw[i];
        const e = ref.logL[i];
        if (!Number.isFinite(v) || !Number.isFinite(e)) continue;
        comparable++;
        const rl = Math.abs(v - e);
        const rn = v > 0 ? Math.abs(Math.log10(v) - e) : Infinity;
        if (Math.min(rl, rn) < ref.tol[i] && Math.abs(rl - rn) > 0.3) {
          if (rl < rn) asLog++;
          else asLin++;
        }
      }
    }
    const total = asLog + asLin;
    const neg = negativeEvidence(vals);
    let log: boolean;
    let why: string;
    if (neg.says) {
      log = true;
      why = `${neg.count} negative values, impossible for a linear luminosity`;
    } else if (asLog !== asLin && (total >= MIN_VOTES || total >= 0.5 * comparable)) {
      // A short table can still settle it when most of its comparable rows vote one way.
      log = asLog > asLin;
      why = `${Math.max(asLog, asLin)} of ${total} rows that could be told apart agree with ${ref!.what} read as ${log ? 'log(solLum)' : 'solLum'}`;
    } else if (vals.reduce((a, b) => Math.max(a, b), -Infinity) > 7.5) {
      log = false;
      why = 'values above 7.5 cannot be log L in solar units';
    } else {
      throw new BindingError(
        `column \`${c.column}\`: cannot tell from the values whether luminosity is linear or log (median ${fmt(med)}, no negative values` +
          `${ref ? `, ${ref.what} did not settle it` : ', and no radius with Teff, or mass, to compare with'}); ` +
          `declare it with --unit ${c.column}=solLum or --unit ${c.column}=log(solLum)`,
        c.column,
      );
    }
    const minority = log ? asLin : asLog;
    if (ref && minority >= Math.max(MIN_VOTES, 0.05 * total)) {
      const unit = log ? 'log(solLum)' : 'solLum';
      const otherUnit = log ? 'solLum' : 'log(solLum)';
      this.notes.push(
        `\`${c.column}\` looks mixed: ${asLog} sample rows agree with ${ref.what} as log(solLum) and ${asLin} as solLum; ` +
          `read as ${unit}, so rows written as ${otherUnit} will be flagged (use --unit ${c.column}=${otherUnit} if that is the convention).`,
      );
    }
    return inferred(log ? 'log(solLum)' : 'solLum', why);
  }

  /** Distance against a parallax whose unit was declared: 1000/plx[mas] should be the distance in pc. */
  private inferDistance(c: Candidate, raw: Float64Array): Inferred | null {
    const p = this.chosen.get('parallax');
    if (!p || !p.resolved || !['option', 'metadata', 'header'].includes(p.resolved.source)) return null;
    const plx = this.sampleCanonical('parallax');
    if (!plx) return null;
    const d: number[] = [];
    for (let i = 0; i < raw.length; i++) {
      const x = Math.log10(raw[i]) - Math.log10(1000 / plx[i]);
      if (plx[i] > 0 && Number.isFinite(x)) d.push(x);
    }
    if (d.length < MIN_VOTES) return null;
    const m = median(Float64Array.from(d));
    const units: [string, number][] = [
      ['pc', 0],
      ['kpc', -3],
      ['lyr', Math.log10(3.261563777)],
    ];
    for (const [u, off] of units) {
      if (Math.abs(m - off) < 0.15) return { unit: u, source: 'inferred', why: `it agrees with 1/parallax from \`${p.cand.column}\` in ${u}` };
    }
    return null;
  }

  // -- text quantities ---------------------------------------------------------------------

  private chooseText(q: TextQuantity): void {
    const cands = this.candidates.filter((c) => c.quantity === q && c.role === 'value');
    if (cands.length === 0) return;
    // Priority, then file order: which id a finding quotes is a matter of taste, not of physics.
    const sorted = [...cands].sort((a, b) => b.score - a.score || a.index - b.index);
    const pick = sorted[0];
    this.chosen.set(q, { cand: pick, resolved: null, errors: [] });
    const tied = sorted.filter((c) => c !== pick && c.score === pick.score);
    if (tied.length > 0 && pick.source !== 'option') {
      this.notes.push(
        `${tied.map((c) => `\`${c.column}\``).join(', ')} could also be the ${q === 'id' ? 'star identifier' : 'stage or class'}; ` +
          `\`${pick.column}\` comes first (choose another with --bind COLUMN=${q}).`,
      );
    }
  }

  // -- uncertainties -----------------------------------------------------------------------

  private attachErrors(q: NumericQuantity): void {
    const chosen = this.chosen.get(q);
    if (!chosen || !chosen.resolved) return;
    const vi = chosen.cand.index;
    // Uncertainties given with --bind replace whatever the names suggest for this quantity.
    const fromOptions = this.candidates.filter((c) => c.quantity === q && c.role !== 'value' && c.source === 'option');
    let errs: Candidate[];
    if (fromOptions.length > 0) {
      errs = fromOptions;
    } else {
      errs = this.candidates.filter((c) => c.role !== 'value' && c.base === vi);
      if (errs.length === 0) return;
      errs = this.pickErrorSet(chosen, errs);
    }
    chosen.errors = errs.map((e) => this.errorBinding(q, chosen, e));
  }

  private pickErrorSet(chosen: Chosen, errs: Candidate[]): Candidate[] {
    const col = chosen.cand.column;
    const best = (role: NameRole): Candidate | undefined => {
      const of = errs.filter((e) => e.role === role).sort((a, b) => b.score - a.score || a.index - b.index);
      if (of.length > 1) this.notes.push(`\`${col}\` has more than one ${role === 'sym' ? '' : role === 'lo' ? 'lower ' : 'upper '}uncertainty column (${of.map((e) => `\`${e.column}\``).join(', ')}); using \`${of[0].column}\`.`);
      return of[0];
    };
    const lo = best('lo');
    const hi = best('hi');
    const sym = best('sym');
    if ((lo || hi) && sym) {
      this.notes.push(`\`${col}\` has both a symmetric uncertainty \`${sym.column}\` and ${lo && hi ? 'lower and upper' : lo ? 'a lower' : 'an upper'} one; the asymmetric one is used.`);
    }
    if (lo && hi && this.looksLikeBounds(chosen, lo, hi)) {
      this.notes.push(
        `\`${lo.column}\` and \`${hi.column}\` look like bounds around \`${col}\` (value between them in the sample), not uncertainties; ` +
          `they are not used (bind them with --bind ${lo.column}=${chosen.cand.quantity}.errLo if they are).`,
      );
      return sym ? [sym] : [];
    }
    return lo || hi ? [lo, hi].filter((e): e is Candidate => e !== undefined) : sym ? [sym] : [];
  }

  /**
   * An uncertainty magnitude rarely exceeds its value; a bound above the value always does. When
   * the value sits between `lo` and `hi` in nine rows of ten, they are an interval, not errors.
   */
  private looksLikeBounds(chosen: Chosen, lo: Candidate, hi: Candidate): boolean {
    const v = this.sampleRaw(chosen.cand.index);
    const a = this.sampleRaw(lo.index);
    const b = this.sampleRaw(hi.index);
    if (!v || !a || !b) return false;
    let n = 0;
    let inside = 0;
    for (let i = 0; i < v.length; i++) {
      if (!Number.isFinite(v[i]) || !Number.isFinite(a[i]) || !Number.isFinite(b[i])) continue;
      n++;
      if (a[i] < v[i] && v[i] < b[i]) inside++;
    }
    return n >= 5 && inside >= 0.9 * n;
  }

  private errorBinding(q: NumericQuantity, chosen: Chosen, e: Candidate): ErrorBinding {
    const value = chosen.resolved!;
    const raw = this.sampleRaw(e.index);
    let negatives = 0;
    let positives = 0;
    if (raw) {
      for (let i = 0; i < raw.length; i++) {
        if (raw[i] < 0) negatives++;
        else if (raw[i] > 0) positives++;
      }
    }
    const negativeStored = e.role === 'lo' && ((e.source !== 'option' && e.guess.negativeStored) || (negatives > 0 && positives === 0));
    if (negatives > 0 && !negativeStored) {
      this.notes.push(`\`${e.column}\`: ${negatives} negative uncertainties in the sample; read as magnitudes.`);
    }
    const declared = optionUnit(this.options, e.column) ?? (isNoUnit(this.meta[e.index].unit) ? null : (this.meta[e.index].unit as string).trim());
    let unit: string;
    if (declared !== null) {
      unit = declared;
    } else if (value.qu.log || q === 'feh') {
      unit = 'dex';
    } else if (q === 'mbol') {
      unit = 'mag';
    } else {
      unit = value.unit;
    }
    // Validate now: a unit that cannot hold this uncertainty is a configuration error.
    const es = errorSpec(q, unit, e.column);
    if (es.dex) unit = 'dex';
    return { role: e.role === 'value' ? 'sym' : e.role, column: e.column, columnIndex: e.index, unit, negativeStored };
  }

  // -- sample access -----------------------------------------------------------------------

  private sampleRaw(i: number): Float64Array | null {
    if (!this.sample || i >= this.sample.columns.length) return null;
    let a = this.rawCache.get(i);
    if (!a) {
      a = new Float64Array(this.sample.length);
      readNumbers(this.sample.columns[i], this.names[i], a, null);
      this.rawCache.set(i, a);
    }
    return a;
  }

  /** The sample's values of a bound quantity in canonical units, for comparing with others. */
  private sampleCanonical(q: NumericQuantity): Float64Array | null {
    const cached = this.canonCache.get(q);
    if (cached) return cached;
    const c = this.chosen.get(q);
    if (!c || !c.resolved) return null;
    const raw = this.sampleRaw(c.cand.index);
    if (!raw) return null;
    const out = new Float64Array(raw.length);
    convertValues(raw, valueSpec(q, c.resolved.unit, c.cand.column), out, null);
    this.canonCache.set(q, out);
    return out;
  }

  // -- words -------------------------------------------------------------------------------

  private reason(c: Chosen): string {
    const q = c.cand.quantity;
    const label = q === 'id' ? 'star identifier' : q === 'stage' ? 'stage or class' : QUANTITY_INFO[q as NumericQuantity].label;
    const how =
      c.cand.source === 'option'
        ? `${label} as given with --bind`
        : c.cand.source === 'ucd'
          ? `${label} from its UCD \`${c.cand.ucd}\``
          : c.cand.guess.planet
            ? `${label} from the header name (a planet name, for want of a star's)`
            : `${label} from the header name${c.cand.guess.decoration ? ` (with the extra \`${c.cand.guess.decoration}\`)` : ''}`;
    return c.resolved ? `\`${c.cand.column}\`: ${how}, ${c.resolved.phrase}` : `\`${c.cand.column}\`: ${how}`;
  }

  /** Say why `P_MASS` or `pl_rade` is not the star's mass or radius, when there are such columns. */
  private notePlanets(): void {
    const looksStellar = this.guesses.filter((g) => {
      if (!g.planet || g.quantity !== null) return false;
      const stripped = g.column.trim().replace(/^(?:pl|planet|p)_/i, '');
      const inner = guessName(stripped);
      return inner.quantity !== null && isNumericQuantity(inner.quantity);
    });
    if (looksStellar.length === 0) return;
    const shown = looksStellar.slice(0, 3).map((g) => `\`${g.column}\``).join(', ');
    const more = looksStellar.length > 3 ? ` and ${looksStellar.length - 3} more` : '';
    this.notes.push(`${shown}${more} left unbound: planet columns are never stellar quantities.`);
  }
}

/** A unit given with --unit for a column of no known quantity: it must at least be a unit. */
function checkUnitText(unit: string, column: string): void {
  try {
    parseUnit(unit);
  } catch (e) {
    if (e instanceof BindingError) throw new BindingError(`--unit ${column}=${unit}: ${e.message}`, column);
    throw e;
  }
}

/**
 * Decide which column is which quantity, in which unit, and why. `sample` is the first batch (or
 * null); it is only read, to infer units nobody declared. Throws BindingError for an unknown unit,
 * an option naming a missing column, or two columns equally likely to be one quantity.
 */
export function bindColumns(meta: ColumnMeta[], sample: RawBatch | null, options: BindOptions): Binding {
  return new Binder(meta, sample, options).run();
}

// ---------------------------------------------------------------------------------------------
// Raw batch -> canonical batch

interface NumericPlan {
  binding: ColumnBinding;
  quantity: NumericQuantity;
  spec: ValueSpec;
  errors: { binding: ErrorBinding; spec: ErrorSpec }[];
}

interface Plan {
  numeric: NumericPlan[];
  text: ColumnBinding[];
}

const plans = new WeakMap<Binding, Plan>();

function planOf(binding: Binding): Plan {
  let p = plans.get(binding);
  if (p) return p;
  p = { numeric: [], text: [] };
  for (const b of binding.columns) {
    if (!isNumericQuantity(b.quantity)) {
      p.text.push(b);
      continue;
    }
    const q = b.quantity;
    p.numeric.push({
      binding: b,
      quantity: q,
      spec: valueSpec(q, b.unit, b.column),
      errors: b.errors.map((e) => ({ binding: e, spec: errorSpec(q, e.unit, e.column) })),
    });
  }
  plans.set(binding, p);
  return p;
}

function absInPlace(a: Float64Array): void {
  for (let i = 0; i < a.length; i++) if (a[i] < 0) a[i] = -a[i];
}

/**
 * Parse and convert one raw batch. Each bound column is read once into a typed array and converted
 * in a typed-array loop; problems are sparse, one entry per bad cell or malformed record.
 */
export function toBatch(raw: RawBatch, binding: Binding, input: number): Batch {
  const plan = planOf(binding);
  const n = raw.length;
  const problems: InputProblem[] = [];
  const quantities: Batch['quantities'] = {};
  const text: Batch['text'] = {};

  for (const b of plan.text) {
    const col = raw.columns[b.columnIndex];
    const values = col ? readText(col, n) : new Array<string | null>(n).fill(null);
    const tc: TextColumn = { column: b.column, values };
    text[b.quantity as TextQuantity] = tc;
  }

  for (const p of plan.numeric) {
    const col = raw.columns[p.binding.columnIndex];
    const rawValues = new Float64Array(n);
    if (col) readNumbers(col, p.binding.column, rawValues, problems);
    else rawValues.fill(NaN);
    const value = new Float64Array(n);
    const isLum = p.quantity === 'luminosity';
    const log = isLum ? new Float64Array(n) : null;
    convertValues(rawValues, p.spec, value, log);

    let errLo: Float64Array | null = null;
    let errHi: Float64Array | null = null;
    let logErrLo: Float64Array | null = null;
    let logErrHi: Float64Array | null = null;
    const errColumns: string[] = [];
    for (const e of p.errors) {
      const ecol = raw.columns[e.binding.columnIndex];
      const a = new Float64Array(n);
      if (ecol) readNumbers(ecol, e.binding.column, a, problems);
      else a.fill(NaN);
      absInPlace(a);
      errColumns.push(e.binding.column);
      if (e.binding.role === 'sym' || e.binding.role === 'lo') {
        errLo = new Float64Array(n);
        logErrLo = isLum ? new Float64Array(n) : null;
        convertErrorSide(a, 'lo', p.spec, e.spec, value, errLo, logErrLo);
      }
      if (e.binding.role === 'sym' || e.binding.role === 'hi') {
        errHi = new Float64Array(n);
        logErrHi = isLum ? new Float64Array(n) : null;
        convertErrorSide(a, 'hi', p.spec, e.spec, value, errHi, logErrHi);
      }
    }

    const qc: QuantityColumn = { column: p.binding.column, unit: p.binding.unit, value, raw: rawValues, errLo, errHi, errColumns };
    if (log) {
      qc.log = log;
      qc.logErrLo = logErrLo;
      qc.logErrHi = logErrHi;
    }
    quantities[p.quantity] = qc;
  }

  for (const m of raw.malformed) {
    problems.push({
      index: m.index,
      kind: 'malformed',
      column: null,
      text: '',
      message: m.index < 0 && m.line !== null ? `line ${m.line}: ${m.message}` : m.message,
    });
  }
  problems.sort((a, b) => a.index - b.index);

  return { input, length: n, firstRow: raw.firstRow, lines: raw.lines, quantities, text, problems, unusable: {} };
}
