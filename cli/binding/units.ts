/**
 * Unit strings as catalogs write them: IVOA VOUnits, the CDS/FITS dialect (`erg.s-1`, `[Lsun]`),
 * and the spellings people type into headers (`Lsun`, `L_sun`, `erg s-1`, `Solar mass`). Factors
 * come from rules/physics/units.ts so each number has one source; this file only maps spellings.
 */
import { R_SUN_M, PARSEC_M } from '../../rules/physics/constants.js';
import { LINEAR_FACTORS } from '../../rules/physics/units.js';
import type { NumericQuantity } from '../../rules/engine/quantities.js';
import { BindingError } from './types.js';

export type Dimension =
  | 'luminosity'
  | 'mass'
  | 'radius'
  | 'temperature'
  | 'gravity'
  | 'dex'
  | 'distance'
  | 'angle'
  | 'magnitude'
  | 'dimensionless';

export interface ParsedUnit {
  dimension: Dimension;
  /** The values are log10 of the unit (`log(solLum)`, CDS `[Lsun]`). */
  log: boolean;
  /** Multiplier from the linear unit to the canonical unit of the dimension (cm s^-2 for gravity). */
  factor: number;
  /** Normalised VOUnits-style spelling for display; parseUnit(canonical) gives the same unit back. */
  canonical: string;
  /** Metres per unit for lengths, so a length can serve as a radius or a distance. */
  metres?: number;
}

/** The canonical unit of each dimension, as the engine holds it. */
export const DIMENSION_UNIT: Readonly<Record<Dimension, string>> = {
  luminosity: 'solLum',
  mass: 'solMass',
  radius: 'solRad',
  temperature: 'K',
  gravity: 'cm.s-2',
  dex: 'dex',
  distance: 'pc',
  angle: 'mas',
  magnitude: 'mag',
  dimensionless: '',
};

/** Which dimension a numeric quantity's values belong to. */
export const QUANTITY_DIMENSION: Readonly<Record<NumericQuantity, Dimension>> = {
  mass: 'mass',
  luminosity: 'luminosity',
  radius: 'radius',
  teff: 'temperature',
  logg: 'gravity',
  feh: 'dex',
  hydrogenFraction: 'dimensionless',
  parallax: 'angle',
  distance: 'distance',
  mbol: 'magnitude',
};

interface UnitDef {
  dimension: Dimension;
  factor: number;
  canonical: string;
  metres?: number;
  /** `cgs` on a gravity column means log g in cgs by long habit; it is never a linear g. */
  log?: boolean;
  /** Excluded from the case-insensitive fallback because another unit shares its lower case. */
  caseExact?: boolean;
}

const F = LINEAR_FACTORS;
const radiusUnit = (canonical: string): UnitDef => ({
  dimension: 'radius',
  factor: F.radius[canonical],
  canonical,
  metres: F.radius[canonical] * R_SUN_M,
});
const distanceUnit = (factor: number, canonical: string, caseExact = false): UnitDef => ({
  dimension: 'distance',
  factor,
  canonical,
  metres: factor * PARSEC_M,
  caseExact,
});
const unit = (dimension: Dimension, factor: number, canonical: string, log = false): UnitDef => ({
  dimension,
  factor,
  canonical,
  log,
});

const SOL_LUM = unit('luminosity', 1, 'solLum');
const WATT = unit('luminosity', F.luminosity.W, 'W');
const ERG_S = unit('luminosity', F.luminosity['erg/s'], 'erg/s');
const SOL_MASS = unit('mass', 1, 'solMass');
const KG = unit('mass', F.mass.kg, 'kg');
const GRAM = unit('mass', F.mass.g, 'g');
const JUP_MASS = unit('mass', F.mass.jupiterMass, 'jupiterMass');
const EARTH_MASS = unit('mass', F.mass.earthMass, 'earthMass');
const SOL_RAD = radiusUnit('solRad');
const JUP_RAD = radiusUnit('jupiterRad');
const EARTH_RAD = radiusUnit('earthRad');
const AU = radiusUnit('au');
const KM = radiusUnit('km');
const METRE = radiusUnit('m');
const CM = radiusUnit('cm');
const PC = distanceUnit(1, 'pc');
const KPC = distanceUnit(F.distance.kpc, 'kpc');
const MPC = distanceUnit(1e6, 'Mpc', true);
const LYR = distanceUnit(F.distance.lyr, 'lyr');
const MAS = unit('angle', 1, 'mas');
const ARCSEC = unit('angle', F.angle.arcsec, 'arcsec');
const DEG = unit('angle', F.angle.deg, 'deg');
const ARCMIN = unit('angle', F.angle.deg / 60, 'arcmin');
const UARCSEC = unit('angle', 1e-3, 'uarcsec');
const RAD = unit('angle', (F.angle.deg * 180) / Math.PI, 'rad');
const KELVIN = unit('temperature', 1, 'K');
// The cgs gal is 1 cm s^-2 by definition; m s^-2 is 100 of them.
const CGS_ACC = unit('gravity', 1, 'cm.s-2');
const SI_ACC = unit('gravity', 100, 'm.s-2');
const CGS_LOG = unit('gravity', 1, 'log(cm.s-2)', true);
const DEX = unit('dex', 1, 'dex');
const MAG = unit('magnitude', 1, 'mag');
const NONE = unit('dimensionless', 1, '');
const PERCENT = unit('dimensionless', 0.01, '%');

/**
 * Spellings, keyed after normalise(): spaces become `.`, `**` and `^` vanish, so `erg s^-1`,
 * `erg.s**-1` and `erg.s-1` meet at one key.
 */
const ALIASES: Readonly<Record<string, UnitDef>> = {
  // Luminosity
  solLum: SOL_LUM, Lsun: SOL_LUM, L_sun: SOL_LUM, Lsol: SOL_LUM, L_sol: SOL_LUM, L_Sun: SOL_LUM,
  Lo: SOL_LUM, L_o: SOL_LUM, 'L☉': SOL_LUM, 'L⊙': SOL_LUM, 'L_☉': SOL_LUM, 'L_⊙': SOL_LUM, 'L_\\odot': SOL_LUM,
  'Solar.Luminosity': SOL_LUM, 'Solar.luminosity': SOL_LUM, 'solar.luminosities': SOL_LUM,
  W: WATT, 'J/s': WATT, 'J.s-1': WATT,
  'erg/s': ERG_S, 'erg.s-1': ERG_S, 'erg/sec': ERG_S, 'ergs/s': ERG_S, 'ergs.s-1': ERG_S, 'erg.sec-1': ERG_S,
  'ergs/sec': ERG_S,
  // Mass
  solMass: SOL_MASS, Msun: SOL_MASS, M_sun: SOL_MASS, Msol: SOL_MASS, M_sol: SOL_MASS, M_Sun: SOL_MASS,
  Mo: SOL_MASS, M_o: SOL_MASS, 'M☉': SOL_MASS, 'M⊙': SOL_MASS, 'M_☉': SOL_MASS, 'M_⊙': SOL_MASS, 'M_\\odot': SOL_MASS,
  'Solar.mass': SOL_MASS, 'Solar.Mass': SOL_MASS, 'solar.masses': SOL_MASS,
  kg: KG, g: GRAM,
  jupiterMass: JUP_MASS, Mjup: JUP_MASS, MJup: JUP_MASS, M_J: JUP_MASS, M_jup: JUP_MASS, M_Jup: JUP_MASS,
  Mj: JUP_MASS, MJ: JUP_MASS, 'Jupiter.Mass': JUP_MASS, 'Jupiter.mass': JUP_MASS,
  earthMass: EARTH_MASS, Mearth: EARTH_MASS, MEarth: EARTH_MASS, M_E: EARTH_MASS, M_earth: EARTH_MASS,
  M_Earth: EARTH_MASS, Me: EARTH_MASS, 'M⊕': EARTH_MASS, 'M_⊕': EARTH_MASS, 'Earth.Mass': EARTH_MASS,
  'Earth.mass': EARTH_MASS, geoMass: EARTH_MASS,
  // Radius and other lengths
  solRad: SOL_RAD, Rsun: SOL_RAD, R_sun: SOL_RAD, Rsol: SOL_RAD, R_sol: SOL_RAD, R_Sun: SOL_RAD,
  Ro: SOL_RAD, R_o: SOL_RAD, 'R☉': SOL_RAD, 'R⊙': SOL_RAD, 'R_☉': SOL_RAD, 'R_⊙': SOL_RAD, 'R_\\odot': SOL_RAD,
  'Solar.Radius': SOL_RAD, 'Solar.radius': SOL_RAD, 'solar.radii': SOL_RAD,
  jupiterRad: JUP_RAD, Rjup: JUP_RAD, RJup: JUP_RAD, R_J: JUP_RAD, R_jup: JUP_RAD, R_Jup: JUP_RAD, Rj: JUP_RAD,
  RJ: JUP_RAD, 'Jupiter.Radius': JUP_RAD, 'Jupiter.radius': JUP_RAD,
  earthRad: EARTH_RAD, Rearth: EARTH_RAD, REarth: EARTH_RAD, R_E: EARTH_RAD, R_earth: EARTH_RAD,
  R_Earth: EARTH_RAD, Re: EARTH_RAD, 'R⊕': EARTH_RAD, 'R_⊕': EARTH_RAD, 'Earth.Radius': EARTH_RAD,
  'Earth.radius': EARTH_RAD, geoRad: EARTH_RAD,
  au: AU, AU: AU, km: KM, m: METRE, cm: CM,
  pc: PC, parsec: PC, kpc: KPC, Mpc: MPC, lyr: LYR, ly: LYR, 'light.year': LYR,
  // Angles
  mas: MAS, marcsec: MAS, milliarcsec: MAS, arcsec: ARCSEC, asec: ARCSEC, deg: DEG, degree: DEG, degrees: DEG,
  arcmin: ARCMIN, uarcsec: UARCSEC, uas: UARCSEC, 'µas': UARCSEC, 'μas': UARCSEC, rad: RAD,
  // Temperature
  K: KELVIN, Kelvin: KELVIN, kelvin: KELVIN, degK: KELVIN, 'deg.K': KELVIN,
  // Gravity
  'cm.s-2': CGS_ACC, 'cm/s2': CGS_ACC, 'cm/s/s': CGS_ACC, gal: CGS_ACC, Gal: CGS_ACC,
  'm.s-2': SI_ACC, 'm/s2': SI_ACC, 'm/s/s': SI_ACC,
  cgs: CGS_LOG,
  // Logarithmic ratios, magnitudes, pure numbers
  dex: DEX, "'dex'": DEX,
  mag: MAG, mags: MAG, magnitude: MAG,
  '1': NONE, '-': NONE, '---': NONE, '%': PERCENT, percent: PERCENT,
};

/** Lower-cased spellings, for `LSUN`, `KPC`, `Solar Mass` and FITS's upper-case habit. */
const ALIASES_LOWER: ReadonlyMap<string, UnitDef> = (() => {
  const map = new Map<string, UnitDef>();
  const clash = new Set<string>();
  for (const [key, def] of Object.entries(ALIASES)) {
    // Single letters keep their case: `M` is no metre and `G` no gram.
    if (def.caseExact || key.length === 1) continue;
    const k = key.toLowerCase();
    const prev = map.get(k);
    if (prev && prev !== def) clash.add(k);
    else map.set(k, def);
  }
  for (const k of clash) map.delete(k);
  return map;
})();

/**
 * SI prefixes VOUnits allows, and the few base units catalogs really prefix. Prefixes are matched
 * with their case (`mpc` is a milliparsec, `Mpc` a megaparsec).
 */
const PREFIX: Readonly<Record<string, number>> = {
  Y: 1e24, Z: 1e21, E: 1e18, P: 1e15, T: 1e12, G: 1e9, M: 1e6, k: 1e3, h: 1e2,
  d: 1e-1, c: 1e-2, m: 1e-3, u: 1e-6, 'µ': 1e-6, 'μ': 1e-6, n: 1e-9, p: 1e-12, f: 1e-15, a: 1e-18,
};
const PREFIXABLE: Readonly<Record<string, UnitDef>> = { W: WATT, g: GRAM, m: METRE, pc: PC, arcsec: ARCSEC, K: KELVIN };

/** A solar unit whose quantity depends on the column (`log10(Solar)` in NASA archive headers). */
const SOLAR_WORDS = new Set(['solar', 'sun', 'sol']);

/** Quantity symbols that may stand before a `/` in a ratio unit such as `L/Lsun`. */
const RATIO_SYMBOL = /^(L|Lbol|Lum|M|Mass|R|Rad|T|Teff|g)\*?$/;

function normalise(s: string): string {
  return s
    .trim()
    .replace(/\*\*/g, '')
    .replace(/\^/g, '')
    .replace(/\s*([./])\s*/g, '$1')
    .replace(/\s+/g, '.');
}

function fail(text: string, why = ''): never {
  throw new BindingError(`unknown unit \`${text}\`${why}`, null);
}

function fromDef(def: UnitDef, log: boolean): ParsedUnit {
  const p: ParsedUnit = { dimension: def.dimension, log, factor: def.factor, canonical: def.canonical };
  if (def.metres !== undefined) p.metres = def.metres;
  return p;
}

function withLog(p: ParsedUnit, text: string): ParsedUnit {
  if (p.log) fail(text, ' (a log of a log)');
  if (p.dimension === 'dex' || p.dimension === 'magnitude') fail(text, ' (a log of a logarithmic unit)');
  // log of a pure number is a dex value: `[-]` is how CDS writes [Fe/H]-like ratios.
  if (p.dimension === 'dimensionless') return { dimension: 'dex', log: false, factor: 1, canonical: 'dex' };
  return { ...p, log: true, canonical: `log(${p.canonical})` };
}

function lookup(key: string): UnitDef | undefined {
  if (Object.hasOwn(ALIASES, key)) return ALIASES[key];
  const lower = ALIASES_LOWER.get(key.toLowerCase());
  if (lower) return lower;
  for (const base of Object.keys(PREFIXABLE)) {
    if (key.length <= base.length || !key.endsWith(base)) continue;
    const prefix = key.slice(0, key.length - base.length);
    if (!Object.hasOwn(PREFIX, prefix)) continue;
    const def = PREFIXABLE[base];
    const scale = PREFIX[prefix];
    const canonical = prefix + def.canonical;
    return {
      ...def,
      factor: def.factor * scale,
      canonical,
      metres: def.metres === undefined ? undefined : def.metres * scale,
    };
  }
  return undefined;
}

/** Solar units resolve only with a dimension to hang them on. */
function solarFor(dimension: Dimension | undefined): UnitDef | undefined {
  if (dimension === 'luminosity') return SOL_LUM;
  if (dimension === 'mass') return SOL_MASS;
  if (dimension === 'radius') return SOL_RAD;
  return undefined;
}

/**
 * Parse a unit string. `hint` is the dimension the column is expected to have; it only resolves
 * spellings that mean nothing on their own (`Solar`, `log10(Solar)`). Throws BindingError for a
 * unit it does not know; the caller adds the column name.
 */
export function parseUnit(text: string, hint?: Dimension): ParsedUnit {
  let s = text.trim();
  if (s === '') return fromDef(NONE, false);
  if (s.length > 2 && s.startsWith("'") && s.endsWith("'")) s = s.slice(1, -1).trim();

  // CDS writes a decimal log as the unit in square brackets: `[Lsun]`, `[cm/s2]`, `[Sun]`.
  const bracket = /^\[(.*)\]$/.exec(s);
  if (bracket) {
    const inner = bracket[1].trim();
    if (inner === 'Sun' || inner === 'sun' || inner === '-' || inner === '') return fromDef(DEX, false);
    if (inner === 'cgs') return fromDef(CGS_LOG, true);
    return withLog(parseLinear(inner, text, hint), text);
  }

  const fn = /^(log10|log|lg|dex)\s*\((.*)\)$/i.exec(s) ?? /^(log10|log|lg)[\s_]+(.+)$/i.exec(s);
  if (fn) {
    const inner = fn[2].trim();
    if (/^cgs$/i.test(inner)) return fromDef(CGS_LOG, true);
    return withLog(parseLinear(inner, text, hint), text);
  }
  if (/^dex[\s_]*cgs$/i.test(s)) return fromDef(CGS_LOG, true);
  return parseLinear(s, text, hint);
}

function parseLinear(s: string, original: string, hint: Dimension | undefined): ParsedUnit {
  // A ratio to a solar unit, `L/Lsun` or `L/L.`, is that unit; the numerator only names the quantity.
  const ratio = /^([A-Za-z]+\*?)\s*\/\s*(.+)$/.exec(s);
  if (ratio && RATIO_SYMBOL.test(ratio[1])) {
    const den = ratio[2].trim().replace(/^([LMR])\.$/, '$1sun');
    return parseLinear(den, original, hint);
  }

  // An optional leading scale factor: `1e26W`, `1.898E27kg`, CDS `10+33erg/s`, `10**26 W`.
  let scale = 1;
  let rest = s;
  const cds = /^10([+-]\d+)\s*(\D.*)$/.exec(s);
  const plain = /^(\d+(?:\.\d*)?(?:[eE][+-]?\d+)?)\s*[.*x]?\s*([^\d.+\-].*)$/.exec(s);
  const power = /^10(?:\*\*|\^)([+-]?\d+)\s*[.*]?\s*(.+)$/.exec(s);
  if (power) {
    scale = 10 ** Number(power[1]);
    rest = power[2];
  } else if (cds) {
    scale = 10 ** Number(cds[1]);
    rest = cds[2];
  } else if (plain) {
    scale = Number(plain[1]);
    rest = plain[2];
  }
  if (!(scale > 0) || !Number.isFinite(scale)) fail(original);

  const key = normalise(rest);
  let def = lookup(key);
  if (!def && SOLAR_WORDS.has(key.toLowerCase())) {
    def = solarFor(hint);
    if (!def) fail(original, ' (solar units of what? give the unit, e.g. solLum)');
  }
  if (!def) fail(original);
  if (scale === 1) return fromDef(def, def.log === true);
  if (def.log) fail(original);
  const p = fromDef(def, false);
  p.factor *= scale;
  if (p.metres !== undefined) p.metres *= scale;
  p.canonical = `${scale}${def.canonical}`;
  return p;
}

/** How a parsed unit reads into a quantity's canonical unit. */
export interface QuantityUnit {
  /** Values are log10 of the unit. */
  log: boolean;
  /** Linear unit -> canonical unit of the quantity. */
  factor: number;
  /** Display spelling (`log(solLum)`, `W`, `dex`). */
  unit: string;
}

const LOGGABLE: ReadonlySet<NumericQuantity> = new Set<NumericQuantity>([
  'mass',
  'luminosity',
  'radius',
  'teff',
  'logg',
  'distance',
]);

/**
 * Read `parsed` as a unit of `quantity`, or null when it cannot be one. Lengths cross between
 * radius and distance (an `au` radius, a `km` distance); `dex` on a positive quantity means log10
 * of its canonical unit, the way catalogs label log L and log g columns.
 */
export function unitForQuantity(quantity: NumericQuantity, parsed: ParsedUnit): QuantityUnit | null {
  const want = QUANTITY_DIMENSION[quantity];
  if (parsed.dimension === want) return { log: parsed.log, factor: parsed.factor, unit: parsed.canonical };
  if ((want === 'radius' || want === 'distance') && parsed.metres !== undefined) {
    const factor = parsed.metres / (want === 'radius' ? R_SUN_M : PARSEC_M);
    return { log: parsed.log, factor, unit: parsed.canonical };
  }
  if (parsed.dimension === 'dex' && LOGGABLE.has(quantity)) {
    return { log: true, factor: 1, unit: `log(${DIMENSION_UNIT[want]})` };
  }
  if (want === 'dex' && parsed.dimension === 'dimensionless' && parsed.factor === 1) {
    return { log: false, factor: 1, unit: 'dex' };
  }
  return null;
}

/** A unit string that declares nothing: VOTable's empty unit, CDS `---`. */
export function isNoUnit(text: string | null | undefined): boolean {
  if (text === null || text === undefined) return true;
  const t = text.trim();
  return t === '' || t === '-' || t === '---' || t === '--';
}
