/**
 * Linear conversion factors into the engine's canonical units. Every factor is built from
 * constants.ts so a source is stated once; a value in unit U times LINEAR_FACTORS[dim][U] gives the
 * value in the canonical unit of dim. Keys are IVOA VOUnits spellings; aliases such as "Lsun" or
 * "erg.s-1" belong to the binding layer, which maps them onto these keys.
 */
import {
  AU_M,
  C_M_S,
  GM_EARTH,
  GM_JUP,
  GM_SUN,
  L_SUN_W,
  M_SUN_KG,
  PARSEC_M,
  R_EARTH_M,
  R_JUP_M,
  R_SUN_M,
} from './constants.js';

export type Dimension = 'luminosity' | 'mass' | 'radius' | 'distance' | 'angle' | 'temperature';

/** The unit every quantity of a dimension is held in inside the engine. */
export const CANONICAL_UNIT: Readonly<Record<Dimension, string>> = {
  luminosity: 'solLum',
  mass: 'solMass',
  radius: 'solRad',
  distance: 'pc',
  angle: 'mas',
  temperature: 'K',
};

/** 1 erg = 1e-7 J by definition of the cgs erg. */
const ERG_J = 1e-7;
/** Julian year in seconds, 365.25 d of 86 400 s (IAU definition used for the light year). */
const JULIAN_YEAR_S = 365.25 * 86_400;
/** Light year = c x Julian year = 9 460 730 472 580 800 m exactly (IAU); exact in a double. */
const LIGHT_YEAR_M = C_M_S * JULIAN_YEAR_S;

export const LINEAR_FACTORS: Readonly<Record<Dimension, Readonly<Record<string, number>>>> = {
  luminosity: {
    solLum: 1,
    W: 1 / L_SUN_W, // IAU 2015 B3 nominal L_sun
    'erg/s': ERG_J / L_SUN_W,
  },
  mass: {
    solMass: 1,
    // kg goes through G (CODATA 2018), so it carries G's 2.2e-5 relative uncertainty.
    kg: 1 / M_SUN_KG,
    g: 1e-3 / M_SUN_KG,
    // Planet masses as ratios of IAU 2015 B3 nominal GM: G cancels, the ratio is exact.
    jupiterMass: GM_JUP / GM_SUN,
    earthMass: GM_EARTH / GM_SUN,
  },
  radius: {
    solRad: 1,
    m: 1 / R_SUN_M, // IAU 2015 B3 nominal R_sun
    km: 1e3 / R_SUN_M,
    cm: 1e-2 / R_SUN_M,
    jupiterRad: R_JUP_M / R_SUN_M, // nominal equatorial radii, IAU 2015 B3
    earthRad: R_EARTH_M / R_SUN_M,
    au: AU_M / R_SUN_M, // IAU 2012 B2 au
  },
  distance: {
    pc: 1,
    kpc: 1e3,
    lyr: LIGHT_YEAR_M / PARSEC_M, // parsec as 648000/pi au, IAU 2015 B2
  },
  angle: {
    mas: 1,
    arcsec: 1e3,
    deg: 3600 * 1e3,
  },
  temperature: {
    K: 1,
  },
};

/**
 * The factor from `unit` to the canonical unit of `dimension`, or undefined when the unit is not
 * known for that dimension. Own-property lookup, so a column unit such as "constructor" or
 * "toString" cannot pick up something from Object.prototype.
 */
export function linearFactor(dimension: Dimension, unit: string): number | undefined {
  const table = LINEAR_FACTORS[dimension];
  return Object.hasOwn(table, unit) ? table[unit] : undefined;
}
