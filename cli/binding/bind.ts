/**
 * Column binding: which catalog column is which quantity, in which unit, and why. Trust runs from
 * the user's options, through the file's metadata (unit, UCD), a unit written in the header, to
 * the header name alone; a unit nobody declared is inferred from the sample values and said so in
 * the notes. Ambiguity is an error, never a guess. Units are settled in resolve-unit.ts and
 * infer-unit.ts, uncertainties in uncertainty-columns.ts; toBatch lives in to-batch.ts and is
 * re-exported so callers import binding and conversion from this one module.
 */
import {
  QUANTITY_INFO,
  TEXT_QUANTITIES,
  isNumericQuantity,
  type NumericQuantity,
  type Quantity,
  type TextQuantity,
} from '../../rules/engine/quantities.js';
import type { ColumnMeta, RawBatch } from '../readers/types.js';
import type { BindContext, Candidate, Chosen, Resolved } from './bind-context.js';
import { checkUnitText, optionOrigin, parseOptionRole, roleText, type OptionRole } from './bind-options.js';
import { readNumbers } from './cells.js';
import { convertValues, quantityUnit, valueSpec } from './convert.js';
import { guessName, guessNames, type NameGuess, type NameRole } from './names.js';
import { resolveUnit } from './resolve-unit.js';
import { BindingError, type Binding, type BindOptions, type ColumnBinding } from './types.js';
import { ucdInfo } from './ucd.js';
import { attachErrors } from './uncertainty-columns.js';

export { toBatch } from './to-batch.js';

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

interface Ambiguity {
  quantity: Quantity;
  columns: string[];
  why: string;
}

function quantityLabel(q: Quantity): string {
  return q === 'id' ? 'star identifier' : q === 'stage' ? 'stage or class' : QUANTITY_INFO[q].label;
}

/** Passes itself as the BindContext of the extracted steps, so they share its caches and notes. */
class Binder implements BindContext {
  private readonly names: string[];
  private readonly indexOf = new Map<string, number>();
  private readonly guesses: NameGuess[];
  private readonly optionRoles = new Map<number, OptionRole | 'none'>();
  readonly candidates: Candidate[] = [];
  readonly chosen = new Map<Quantity, Chosen>();
  readonly notes: string[] = [];
  private readonly ambiguities: Ambiguity[] = [];
  private readonly rawCache = new Map<number, Float64Array>();
  private readonly canonCache = new Map<Quantity, Float64Array>();

  constructor(
    readonly meta: readonly ColumnMeta[],
    private readonly sample: RawBatch | null,
    readonly options: BindOptions,
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
    for (const q of VALUE_ORDER) attachErrors(this, q);
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
      const i = this.column(col, optionOrigin(this.options, col));
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
      pick = { cand: tops[0], resolved: resolveUnit(this, tops[0], q) };
    } else {
      const resolved = tops.map((c) => ({ cand: c, resolved: resolveUnit(this, c, q) }));
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
   * PHL's `S_LOG_LUM` beside `S_LUMINOSITY`, the RSG table's `log(R/R.)` beside `R*`, sdb's
   * `plx_value` (mas) beside `plx_arcsec`: one quantity written twice, log and linear or in two
   * units. When the sample shows the same values, bind one (the one with uncertainties, else the
   * linear one, else the first) and say so; otherwise it stays ambiguous.
   */
  private sameValuesTwice(q: NumericQuantity, tops: { cand: Candidate; resolved: Resolved }[]): { cand: Candidate; resolved: Resolved } | null {
    if (tops.length !== 2) return null;
    const [a, b] = tops;
    if (a.resolved.qu.log === b.resolved.qu.log && a.resolved.unit === b.resolved.unit) return null;
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
      `\`${other.cand.column}\` repeats \`${pick.cand.column}\` (${agree} of ${n} sample rows agree within 0.01 dex, ` +
        `${a.resolved.qu.log !== b.resolved.qu.log ? 'one log and one linear' : `in ${a.resolved.unit} and ${b.resolved.unit}`}); ` +
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
        `${tied.map((c) => `\`${c.column}\``).join(', ')} could also be the ${quantityLabel(q)}; ` +
          `\`${pick.column}\` comes first (choose another with --bind COLUMN=${q}).`,
      );
    }
  }

  // -- sample access -----------------------------------------------------------------------

  sampleRaw(i: number): Float64Array | null {
    if (!this.sample || i >= this.sample.columns.length) return null;
    let a = this.rawCache.get(i);
    if (!a) {
      a = new Float64Array(this.sample.length);
      readNumbers(this.sample.columns[i], this.names[i], a, null);
      this.rawCache.set(i, a);
    }
    return a;
  }

  sampleCanonical(q: NumericQuantity): Float64Array | null {
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
    const label = quantityLabel(q);
    const how =
      c.cand.source === 'option'
        ? `${label} as given ${originPhrase(optionOrigin(this.options, c.cand.column))}`
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

/** `with --bind`, or `in the binding file b.yaml, line 3`. */
function originPhrase(origin: string): string {
  return origin === '--bind' ? 'with --bind' : `in ${origin}`;
}

/**
 * Decide which column is which quantity, in which unit, and why. `sample` is the first batch (or
 * null); it is only read, to infer units nobody declared. Throws BindingError for an unknown unit,
 * an option naming a missing column, or two columns equally likely to be one quantity.
 */
export function bindColumns(meta: ColumnMeta[], sample: RawBatch | null, options: BindOptions): Binding {
  return new Binder(meta, sample, options).run();
}
