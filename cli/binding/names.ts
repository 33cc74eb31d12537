/**
 * What a column header alone says: which quantity, whether it is a value or an uncertainty of
 * another column, whether it is a log, and any unit written into it. The binder weighs this below
 * explicit options and file metadata; here nothing is decided, only guessed and scored.
 */
import type { NumericQuantity, Quantity } from '../../rules/engine/quantities.js';
import { isNumericQuantity } from '../../rules/engine/quantities.js';
import { parseUnit, unitForQuantity, QUANTITY_DIMENSION } from './units.js';

export type NameRole = 'value' | 'sym' | 'lo' | 'hi';

/** Where a unit sat in the header, so a reason can quote it the way the user wrote it. */
export type UnitPlace = 'suffix' | 'bracket' | 'ratio' | 'whole';

export interface NameGuess {
  column: string;
  quantity: Quantity | null;
  role: NameRole;
  /** For an uncertainty: the header of the value column it belongs to. Null for values. */
  base: string | null;
  /** The values (or, for an uncertainty, its value column) are log10 of the unit. */
  log: boolean;
  /** Unit text found in the header, ready for parseUnit (`Lsol`, `W`, `Lsun`); null if none. */
  unit: string | null;
  /** The unit as it appears in the header (`_Lsol`, `[W]`, `log(L/L.)`). */
  unitHint: string | null;
  unitPlace: UnitPlace | null;
  /** Higher is surer: a plain name beats a decorated one (`S_RADIUS` over `S_RADIUS_EST`). */
  score: number;
  /** The catalog stores this lower uncertainty as a negative number (NASA `err2`, PHL `_ERROR_MIN`). */
  negativeStored: boolean;
  /** A planet column (`pl_*`, `P_*`): never a stellar quantity. */
  planet: boolean;
  /** The uncertainty convention recognised, in words for a reason (`NASA err2`, `e_ prefix`). */
  convention: string | null;
  /** Words beyond the quantity that lowered the score (`EST` in `S_RADIUS_EST`). */
  decoration: string | null;
}

/** Score of a plain quantity word; decorations and weak words score less. */
export const SCORE_PLAIN = 100;
const DECORATED_PENALTY = 30;
const SOLAR_UNIT_NAME_SCORE = 80;
const GENERIC_ID_SCORE = 50;
const PLANET_ID_SCORE = 30;
const HOST_ID_SCORE = 94;

interface Word {
  q: Quantity;
  score: number;
}

const w = (q: Quantity, score: number): Word => ({ q, score });

/**
 * Quantity words after squashing (lower case, separators removed). Scores rank words that name a
 * quantity outright above those that usually do (`temp`, `met`), and, for ids and stages, encode
 * which column a curator would want quoted in a finding.
 */
const WORDS: Readonly<Record<string, Word>> = {
  mass: w('mass', 100), mstar: w('mass', 100), 'm*': w('mass', 100), stellarmass: w('mass', 100),
  starmass: w('mass', 100),
  luminosity: w('luminosity', 100), lum: w('luminosity', 100), lbol: w('luminosity', 100),
  lstar: w('luminosity', 100), 'l*': w('luminosity', 100), lumbol: w('luminosity', 95), bollum: w('luminosity', 95),
  radius: w('radius', 100), rad: w('radius', 95), rstar: w('radius', 100), 'r*': w('radius', 100),
  teff: w('teff', 100), effectivetemperature: w('teff', 100), tempeff: w('teff', 95), temperature: w('teff', 95),
  tstar: w('teff', 90), temp: w('teff', 85),
  logg: w('logg', 100), surfacegravity: w('logg', 95), gravity: w('logg', 90), grav: w('logg', 85),
  feh: w('feh', 100), metallicity: w('feh', 95), met: w('feh', 90), mh: w('feh', 90), metal: w('feh', 85),
  hydrogenfraction: w('hydrogenFraction', 100), hydrogenmassfraction: w('hydrogenFraction', 100),
  xh: w('hydrogenFraction', 90), hfrac: w('hydrogenFraction', 90), xhydrogen: w('hydrogenFraction', 90),
  hydrogen: w('hydrogenFraction', 80),
  parallax: w('parallax', 100), plx: w('parallax', 100), varpi: w('parallax', 95),
  distance: w('distance', 100), dist: w('distance', 100),
  mbol: w('mbol', 100), absbolmag: w('mbol', 95), mbolabs: w('mbol', 95), bolmag: w('mbol', 90), magbol: w('mbol', 90),
  // Identifiers: a name a person recognises first, then catalog designations, planet names last.
  starid: w('id', 100), starname: w('id', 100), id: w('id', 98), name: w('id', 96), hostname: w('id', HOST_ID_SCORE),
  objectname: w('id', 92), objname: w('id', 92), hostid: w('id', 90), idstar: w('id', 90), karmn: w('id', 88),
  wdid: w('id', 86), objid: w('id', 85), objectid: w('id', 85), targetname: w('id', 85), mainid: w('id', 84),
  simbadname: w('id', 82), sourceid: w('id', 80), object: w('id', 80), designation: w('id', 75),
  alias: w('id', 70), simbad: w('id', 70), target: w('id', 60),
  // Evolutionary stage or class: an explicit stage first, a bare `class` or `type` last (they often
  // mean multiplicity, as CARMENES's `Class` = Triple).
  evolstage: w('stage', 100), evolutionarystage: w('stage', 100), stage: w('stage', 100), evstage: w('stage', 95),
  lumclass: w('stage', 90), classlum: w('stage', 90), luminosityclass: w('stage', 90),
  spectype: w('stage', 80), sptype: w('stage', 80), spt: w('stage', 80), spectraltype: w('stage', 80),
  spectralclass: w('stage', 80), mkclass: w('stage', 80), spclass: w('stage', 75),
  class: w('stage', 70), type: w('stage', 60),
};

/**
 * Single letters carry their case: `L`, `M`, `R` are luminosity, mass, radius, but `l` is a
 * galactic longitude, `m` and `r` are magnitudes.
 */
const SINGLE: Readonly<Record<string, Word>> = {
  L: w('luminosity', 90),
  M: w('mass', 90),
  R: w('radius', 90),
  T: w('teff', 70),
  D: w('distance', 85),
  d: w('distance', 85),
};

/** After `log`, a bare `g` is surface gravity. */
const AFTER_LOG: Readonly<Record<string, Word>> = { g: w('logg', 100) };

const LOG_WORDS = new Set(['log', 'log10', 'lg']);
/** Quantities whose linear value can be written as a log10. */
const LOGGABLE = new Set<Quantity>(['mass', 'luminosity', 'radius', 'teff', 'logg', 'distance']);

/** Leading words that say whose quantity it is, not which. */
const OWNER_PREFIX = new Set(['st', 's', 'star', 'stellar', 'host', 'sy']);
/** Trailing words that add nothing: `teff_st_value`, `M_star`. */
const NEUTRAL = new Set(['value', 'val', 'star', 'st', 'host', 'adopted', 'adopt', 'final', 'string', 'str', 'text', '*']);

/** Words that turn a quantity into something else: `mass_loss`, `mass_ratio`, `Teff_ref`, `st_masslim`. */
const CHANGES_MEANING = new Set([
  'loss', 'ratio', 'rate', 'function', 'func', 'fn', 'density', 'dens', 'flux', 'excess', 'limit', 'lim',
  'ref', 'refs', 'reference', 'flag', 'flg', 'note', 'notes', 'source', 'src', 'method', 'meth', 'quality',
  'qual', 'q', 'n', 'num', 'nb', 'count', 'prov', 'provenance', 'index', 'idx', 'code', 'bib', 'bibcode',
  'over', 'snr', 'sn', 'min', 'max', 'range', 'lower', 'upper', 'ul', 'll', 'rank', 'pct', 'percentile',
  'err', 'error', 'unc', 'planet', 'pl', 'companion', 'comp',
]);
/** For identifiers: columns that identify something other than the star, or a row. */
const ID_NOT_STAR = new Set([
  'system', 'sys', 'parent', 'group', 'cluster', 'pair', 'binary', 'companion', 'ref', 'bib', 'wds',
  'classification', 'class', 'type',
]);
const ROW_WORDS = new Set(['rowid', 'recno', 'row', 'record', 'seq', 'index', 'idx', 'line', 'locrowid']);

const SEPARATORS = /[^\s_:()[\],/.]+/g;

interface Token {
  text: string;
  start: number;
  end: number;
}

function tokenise(s: string): Token[] {
  const out: Token[] = [];
  for (const m of s.matchAll(SEPARATORS)) out.push({ text: m[0], start: m.index, end: m.index + m[0].length });
  return out;
}

function squash(tokens: readonly Token[]): string {
  return tokens
    .map((t) => t.text)
    .join('')
    .toLowerCase()
    .replace(/[^a-z0-9*]/g, '');
}

/** Own-property lookup: a header such as `constructor` must not find Object.prototype. */
function own<T>(table: Readonly<Record<string, T>>, key: string): T | undefined {
  return Object.hasOwn(table, key) ? table[key] : undefined;
}

function wordFor(tokens: readonly Token[]): Word | undefined {
  if (tokens.length === 1 && tokens[0].text.length === 1) return own(SINGLE, tokens[0].text);
  const key = squash(tokens);
  return Object.hasOwn(WORDS, key) ? WORDS[key] : undefined;
}

function blank(column: string): NameGuess {
  return {
    column,
    quantity: null,
    role: 'value',
    base: null,
    log: false,
    unit: null,
    unitHint: null,
    unitPlace: null,
    score: 0,
    negativeStored: false,
    planet: false,
    convention: null,
    decoration: null,
  };
}

/** The unit text, if it parses as a unit this quantity can be read in. */
function unitFits(q: Quantity, text: string): boolean {
  if (!isNumericQuantity(q)) return false;
  try {
    return unitForQuantity(q, parseUnit(text, QUANTITY_DIMENSION[q])) !== null;
  } catch {
    return false;
  }
}

interface ValueGuess {
  quantity: Quantity;
  score: number;
  log: boolean;
  unit: string | null;
  unitHint: string | null;
  unitPlace: UnitPlace | null;
  decoration: string | null;
}

const RATIO_SYMBOL: Readonly<Record<string, NumericQuantity>> = {
  L: 'luminosity', Lbol: 'luminosity', Lum: 'luminosity', 'L*': 'luminosity',
  M: 'mass', Mass: 'mass', 'M*': 'mass',
  R: 'radius', Rad: 'radius', 'R*': 'radius',
  T: 'teff', Teff: 'teff',
};

/** `log(L/L.)`, `L/Lsun`, `log R/R_sun`: a quantity over a solar unit; `L.` is how some tables write L_sun. */
function ratioGuess(name: string): ValueGuess | null {
  const m = /^(log10|log|lg)?\s*\(?\s*([A-Za-z]+\*?)\s*\/\s*([^()\s/]+?)\s*\)?$/i.exec(name);
  if (!m || !Object.hasOwn(RATIO_SYMBOL, m[2])) return null;
  const q = RATIO_SYMBOL[m[2]];
  const den = m[3].replace(/^([LMR])\.$/, '$1sun');
  if (!unitFits(q, den)) return null;
  return { quantity: q, score: SCORE_PLAIN, log: m[1] !== undefined, unit: den, unitHint: name, unitPlace: 'ratio', decoration: null };
}

function tokenGuess(name: string, tokens: Token[]): ValueGuess | null {
  if (tokens.length === 0) return null;
  const plain = wordFor(tokens);
  if (plain) return { quantity: plain.q, score: plain.score, log: false, unit: null, unitHint: null, unitPlace: null, decoration: null };

  const first = tokens[0].text.toLowerCase();
  if (tokens.length > 1 && OWNER_PREFIX.has(first)) {
    const inner = tokenGuess(name, tokens.slice(1));
    if (inner) return inner;
  }

  if (tokens.length > 1 && LOG_WORDS.has(first)) {
    const rest = tokens.slice(1);
    const afterLog = rest.length === 1 && Object.hasOwn(AFTER_LOG, rest[0].text) ? AFTER_LOG[rest[0].text] : undefined;
    if (afterLog) return { quantity: afterLog.q, score: afterLog.score, log: true, unit: null, unitHint: null, unitPlace: null, decoration: null };
    const inner = tokenGuess(name, rest);
    if (inner && LOGGABLE.has(inner.quantity) && !inner.log) return { ...inner, log: true };
    return null;
  }
  // Glued log: `logL`, `logTeff`, `lgL`.
  const glued = /^(log10|log|lg)(.+)$/i.exec(tokens[0].text);
  if (glued) {
    const restText = glued[2];
    const restTokens: Token[] = [{ text: restText, start: tokens[0].start + glued[1].length, end: tokens[0].end }, ...tokens.slice(1)];
    const single = restTokens.length === 1 && restText.length === 1 ? (own(SINGLE, restText.toUpperCase()) ?? own(AFTER_LOG, restText)) : undefined;
    const inner = single
      ? { quantity: single.q, score: single.score, log: false, unit: null, unitHint: null, unitPlace: null, decoration: null }
      : tokenGuess(name, restTokens);
    if (inner && LOGGABLE.has(inner.quantity) && !inner.log) return { ...inner, log: true };
  }

  // A quantity word followed by more words: a unit, a neutral word, a meaning change, or decoration.
  for (let k = tokens.length - 1; k >= 1; k--) {
    const word = wordFor(tokens.slice(0, k));
    if (!word) continue;
    const rest = tokens.slice(k);
    const restText = name.slice(rest[0].start).trim();
    const unitText = restText.replace(/^[[(]\s*|\s*[\])]$/g, '');
    if (unitFits(word.q, unitText)) {
      // A written unit makes `M_Msun` as sure as `mass`: a bare letter is what scores lower.
      return {
        quantity: word.q,
        score: Math.max(word.score, SCORE_PLAIN),
        log: false,
        unit: unitText,
        unitHint: name.slice(tokens[k - 1].end),
        unitPlace: 'suffix',
        decoration: null,
      };
    }
    const restWords = rest.map((t) => t.text.toLowerCase());
    if (restWords.some((r) => CHANGES_MEANING.has(r))) return null;
    if (word.q === 'id' && restWords.some((r) => ID_NOT_STAR.has(r))) return null;
    if (restWords.every((r) => NEUTRAL.has(r))) return { quantity: word.q, score: word.score, log: false, unit: null, unitHint: null, unitPlace: null, decoration: null };
    if (tokens[0].text.length === 1 && k === 1) return null;
    return {
      quantity: word.q,
      score: Math.max(1, word.score - DECORATED_PENALTY),
      log: false,
      unit: null,
      unitHint: null,
      unitPlace: null,
      decoration: restText,
    };
  }

  // One glued token: `Dpc` (a unit after the word), `MassMR`, `Teff0` (a camel-case decoration).
  const t = tokens[0].text;
  const lower = t.toLowerCase();
  let best: { key: string; word: Word } | null = null;
  for (const key of Object.keys(WORDS)) {
    if (key.length < lower.length && lower.startsWith(key) && (!best || key.length > best.key.length)) best = { key, word: WORDS[key] };
  }
  const singleWord = own(SINGLE, t[0]);
  const candidates: { len: number; word: Word; single: boolean }[] = [];
  if (best) candidates.push({ len: best.key.length, word: best.word, single: false });
  if (singleWord && t.length > 1) candidates.push({ len: 1, word: singleWord, single: true });
  for (const c of candidates) {
    const remainder = t.slice(c.len) + name.slice(tokens[0].end);
    if (remainder.length >= 2 && unitFits(c.word.q, remainder)) {
      return { quantity: c.word.q, score: Math.max(c.word.score, SCORE_PLAIN), log: false, unit: remainder, unitHint: remainder, unitPlace: 'suffix', decoration: null };
    }
    if (c.single) continue;
    const head = remainder[0];
    const camel = head >= 'A' && head <= 'Z';
    const digit = head >= '0' && head <= '9';
    if (!(camel || digit)) continue;
    const restWords = tokenise(remainder).map((x) => x.text.toLowerCase());
    if (restWords.some((r) => CHANGES_MEANING.has(r))) return null;
    return { quantity: c.word.q, score: Math.max(1, c.word.score - DECORATED_PENALTY), log: false, unit: null, unitHint: null, unitPlace: null, decoration: remainder };
  }
  return null;
}

/** Generic identifiers: `GaiaDR3_id`, `2MASS_id`, `TIC_ID`. Row numbers are not identifiers. */
function genericId(tokens: Token[]): ValueGuess | null {
  const words = tokens.map((t) => t.text.toLowerCase());
  if (words.some((x) => ROW_WORDS.has(x)) || ROW_WORDS.has(words.join(''))) return null;
  if (words.length < 2 || (words[0] !== 'id' && words[words.length - 1] !== 'id')) return null;
  if (words.some((x) => ID_NOT_STAR.has(x))) return null;
  return { quantity: 'id', score: GENERIC_ID_SCORE, log: false, unit: null, unitHint: null, unitPlace: null, decoration: null };
}

function valueGuess(name: string): ValueGuess | null {
  const ratio = ratioGuess(name);
  if (ratio) return ratio;

  // A unit in brackets at the end: `lum [W]`, `mass(Msun)`, `logL [Lsun]`. Not `log(g)`, where
  // the parentheses belong to the function. Unknown bracket text is left in the name as decoration.
  const br = /^(.*?\S)\s*([[(])\s*([^[\]()]+?)\s*[\])]\s*$/.exec(name);
  if (br && !LOG_WORDS.has(br[1].trim().toLowerCase())) {
    const inner = valueGuess(br[1]);
    if (inner && !inner.unit && unitFits(inner.quantity, br[3])) {
      return { ...inner, unit: br[3], unitHint: name.slice(br[1].length).trim(), unitPlace: 'bracket' };
    }
  }

  // A header that is only a solar unit (`Msun` in Mamajek's table) names its quantity.
  try {
    const u = parseUnit(name);
    const q = ({ solLum: 'luminosity', solMass: 'mass', solRad: 'radius' } as Record<string, NumericQuantity>)[u.canonical];
    if (q && !u.log && /[A-Za-z]{3}/.test(name)) {
      return { quantity: q, score: SOLAR_UNIT_NAME_SCORE, log: false, unit: name, unitHint: name, unitPlace: 'whole', decoration: null };
    }
  } catch {
    // not a unit: read it as words
  }

  const tokens = tokenise(name);
  const guess = tokenGuess(name, tokens) ?? genericId(tokens);
  if (guess) {
    // `logg` is a log by its name; `gravity` may be linear, so only a written log counts.
    if (guess.quantity === 'logg' && /log|lg/i.test(name)) guess.log = true;
    return guess;
  }
  return null;
}

interface ErrorPattern {
  re: RegExp;
  role: 'sym' | 'lo' | 'hi';
  convention: string;
  negativeStored?: boolean;
  /** Builds the value column's name from the match; default is group 1. */
  base?: (m: RegExpExecArray) => string;
}

export const CONVENTION_E_LOWER = '`e_` prefix';
export const CONVENTION_E_UPPER = '`E_` prefix';
const CONVENTION_E_GLUED = '`e` prefix';

/** Uncertainty spellings, most specific first. */
const ERROR_PATTERNS: readonly ErrorPattern[] = [
  { re: /^(.+?)_(?:ERROR|ERR)_MIN$/i, role: 'lo', negativeStored: true, convention: '`_ERROR_MIN` suffix (lower, stored negative)' },
  { re: /^(.+?)_(?:ERROR|ERR)_MAX$/i, role: 'hi', convention: '`_ERROR_MAX` suffix (upper)' },
  { re: /^(.+?)err1$/i, role: 'hi', convention: '`err1` suffix (upper)' },
  { re: /^(.+?)err2$/i, role: 'lo', negativeStored: true, convention: '`err2` suffix (lower, stored negative)' },
  { re: /^(.+?)_?(?:err|error|sig|sigma)_?(?:lo|low|lower|minus|neg|m)$/i, role: 'lo', convention: 'lower-error suffix' },
  { re: /^(.+?)_?(?:err|error|sig|sigma)_?(?:hi|high|upper|plus|pos|p)$/i, role: 'hi', convention: 'upper-error suffix' },
  { re: /^(.+?)_(?:lo|low)_?(?:err|error)$/i, role: 'lo', convention: 'lower-error suffix' },
  { re: /^(.+?)_(?:hi|high|up)_?(?:err|error)$/i, role: 'hi', convention: 'upper-error suffix' },
  { re: /^(.+?)_?(?:sig|sigma|err|error)-$/i, role: 'lo', convention: '`-` suffix (lower)' },
  { re: /^(.+?)_?(?:sig|sigma|err|error)\+$/i, role: 'hi', convention: '`+` suffix (upper)' },
  { re: /^(.+?)_(?:lo|low)$/i, role: 'lo', convention: '`_lo` suffix' },
  { re: /^(.+?)_(?:hi|high)$/i, role: 'hi', convention: '`_hi` suffix' },
  { re: /^(.+?)_(?:err|error|unc|uncertainty|sigma|sig)$/i, role: 'sym', convention: 'error suffix' },
  { re: /^(.+?)(?:err|error)$/i, role: 'sym', convention: 'error suffix' },
  { re: /^(.+?)_(?:err|error|unc)_(.+)$/i, role: 'sym', convention: 'error infix', base: (m) => `${m[1]}_${m[2]}` },
  { re: /^e_(.+)$/, role: 'sym', convention: CONVENTION_E_LOWER },
  { re: /^E_(.+)$/, role: 'hi', convention: CONVENTION_E_UPPER },
  { re: /^(?:err|error|sigma|sig|unc)_(.+)$/i, role: 'sym', convention: 'error prefix' },
];

function errorGuess(name: string): NameGuess | null {
  for (const p of ERROR_PATTERNS) {
    const m = p.re.exec(name);
    if (!m) continue;
    const base = (p.base ? p.base(m) : m[1]).trim();
    if (base === '') continue;
    return fromBase(name, base, p.role, p.convention, p.negativeStored === true);
  }
  // `eM_Msol`, `elogg` (CARMENES): a glued `e` before a name that is itself a quantity. Only taken
  // when the whole header is not a quantity word, and guessNames drops it unless the base exists.
  const glued = /^e(.+)$/.exec(name);
  if (glued && !valueGuess(name)) {
    const rest = glued[1];
    const v = valueGuess(rest);
    if (v && (rest.length >= 3 || /^[A-Z[]/.test(rest))) return fromBase(name, rest, 'sym', CONVENTION_E_GLUED, false);
  }
  return null;
}

function fromBase(name: string, base: string, role: 'sym' | 'lo' | 'hi', convention: string, negativeStored: boolean): NameGuess {
  const g = blank(name);
  const v = valueGuess(base);
  g.role = role;
  g.base = base;
  g.convention = convention;
  g.negativeStored = negativeStored;
  if (v) {
    g.quantity = v.quantity;
    g.score = v.score;
    g.log = v.log;
    g.unit = v.unit;
    g.unitHint = v.unitHint;
    g.unitPlace = v.unitPlace;
    g.decoration = v.decoration;
  }
  return g;
}

function planetGuess(name: string): NameGuess | null {
  if (!/^(?:pl|planet)[_\s]|^[Pp]_/i.test(name)) return null;
  const g = blank(name);
  g.planet = true;
  const squashed = name.toLowerCase().replace(/[^a-z0-9]/g, '');
  if (squashed === 'plhostname' || squashed === 'planethostname') {
    // The old archive's host-star name: a star identifier despite the prefix.
    g.planet = false;
    g.quantity = 'id';
    g.score = HOST_ID_SCORE;
  } else if (squashed === 'plname' || squashed === 'pname' || squashed === 'planetname') {
    g.quantity = 'id';
    g.score = PLANET_ID_SCORE;
  }
  return g;
}

/** Guess from one header with no knowledge of the others. */
export function guessName(header: string): NameGuess {
  const name = header.trim();
  if (name === '') return blank(header);
  const planet = planetGuess(name);
  if (planet) return { ...planet, column: header };
  // CDS byte-by-byte prefixes: r_ reference, n_ note, l_ limit flag, u_ uncertainty flag, f_ flag,
  // q_ quality, o_ number of observations. None is the quantity itself.
  if (/^[rnlufqo]_/.test(name)) return blank(header);
  const err = errorGuess(name);
  if (err) return { ...err, column: header };
  const v = valueGuess(name);
  if (!v) return blank(header);
  return { ...blank(header), ...v, role: 'value' };
}

/**
 * Guess every header of a file. Knowing the others settles what one header cannot: an `e`-glued
 * error needs its base to exist, `e_X` is the lower error when an `E_X` upper error sits beside
 * it (CDS), and `Lberr` belongs to `Lbol` when that is the only column starting with `Lb`.
 */
export function guessNames(headers: readonly string[]): NameGuess[] {
  const guesses = headers.map((h) => guessName(h));
  const exact = new Map<string, number>();
  const lower = new Map<string, number[]>();
  headers.forEach((h, i) => {
    const t = h.trim();
    if (!exact.has(t)) exact.set(t, i);
    const l = t.toLowerCase();
    lower.set(l, [...(lower.get(l) ?? []), i]);
  });
  const findBase = (base: string): number | undefined => {
    const e = exact.get(base);
    if (e !== undefined) return e;
    const l = lower.get(base.toLowerCase());
    if (l && l.length === 1) return l[0];
    if (base.length < 2) return undefined;
    const prefixed = headers
      .map((h, i) => ({ h: h.trim(), i }))
      .filter(({ h, i }) => guesses[i].role === 'value' && guesses[i].quantity !== null && h.toLowerCase().startsWith(base.toLowerCase()));
    return prefixed.length === 1 ? prefixed[0].i : undefined;
  };

  for (let i = 0; i < guesses.length; i++) {
    const g = guesses[i];
    if (g.role === 'value' || g.base === null) continue;
    const bi = findBase(g.base);
    if (bi === undefined || bi === i) {
      if (g.convention === CONVENTION_E_GLUED) guesses[i] = { ...blank(headers[i]) };
      continue;
    }
    const b = guesses[bi];
    g.base = headers[bi].trim();
    if (b.role === 'value' && b.quantity !== null) {
      g.quantity = b.quantity;
      g.score = b.score;
      g.log = b.log;
      g.unit ??= b.unit;
      g.unitHint ??= b.unitHint;
      g.unitPlace ??= b.unitPlace;
    }
  }

  // CDS: `e_X` alone is symmetric; with `E_X` beside it, `e_X` is the lower and `E_X` the upper error.
  const upperOf = new Map<string, number>();
  guesses.forEach((g, i) => {
    if (g.convention === CONVENTION_E_UPPER && g.base !== null) upperOf.set(g.base, i);
  });
  const lowerOf = new Set<string>();
  guesses.forEach((g) => {
    if (g.convention === CONVENTION_E_LOWER && g.base !== null && upperOf.has(g.base)) {
      g.role = 'lo';
      lowerOf.add(g.base);
    }
  });
  for (const [base, i] of upperOf) if (!lowerOf.has(base)) guesses[i].role = 'sym';
  return guesses;
}
