/**
 * Physical constants and nominal solar values. Every value carries its source; nominal values
 * are exact by definition (IAU 2015 Resolution B3) and are conversion constants, not the best
 * current estimate of the real Sun.
 */

export interface ConstantEntry {
  symbol: string;
  value: number;
  unit: string;
  source: string;
}

// IAU 2015 Resolution B3: nominal solar conversion constants.
/** Nominal solar luminosity L_sun^N, W (IAU 2015 B3). */
export const L_SUN_W = 3.828e26;
/** Nominal solar radius R_sun^N, m (IAU 2015 B3). */
export const R_SUN_M = 6.957e8;
/** Nominal solar effective temperature, K (IAU 2015 B3). */
export const TEFF_SUN_K = 5772;
/** Nominal solar mass parameter (GM)_sun^N, m^3 s^-2 (IAU 2015 B3). */
export const GM_SUN = 1.3271244e20;
/** Nominal Jupiter mass parameter (GM)_Jup^N, m^3 s^-2 (IAU 2015 B3). */
export const GM_JUP = 1.2668653e17;
/** Nominal Earth mass parameter (GM)_Earth^N, m^3 s^-2 (IAU 2015 B3). */
export const GM_EARTH = 3.986004e14;
/** Nominal equatorial Jupiter radius, m (IAU 2015 B3). */
export const R_JUP_M = 7.1492e7;
/** Nominal equatorial Earth radius, m (IAU 2015 B3). */
export const R_EARTH_M = 6.3781e6;

// IAU 2015 Resolution B2: bolometric magnitude scale.
/** Luminosity of absolute bolometric magnitude zero, W (IAU 2015 B2). */
export const L0_BOL_W = 3.0128e28;
/** Astronomical unit, m (IAU 2012 B2, exact). */
export const AU_M = 149_597_870_700;
/** Parsec, m: exactly 648000/pi au (IAU 2015 B2). */
export const PARSEC_M = (648_000 / Math.PI) * AU_M;

// CODATA 2018 (values as in CODATA 2018; G, c and sigma are unchanged in CODATA 2022).
/** Speed of light in vacuum, m s^-1 (exact). */
export const C_M_S = 299_792_458;
/** Newtonian constant of gravitation, m^3 kg^-1 s^-2 (CODATA 2018). */
export const G_SI = 6.6743e-11;
/** Stefan-Boltzmann constant, W m^-2 K^-4 (CODATA 2018, exact from h, k, c). */
export const SIGMA_SB = 5.670374419e-8;
/** Thomson cross-section, m^2 (CODATA 2018). */
export const SIGMA_THOMSON = 6.6524587321e-29;
/** Proton mass, kg (CODATA 2018). */
export const M_PROTON_KG = 1.67262192369e-27;

// Derived.
/** Solar mass in kg, (GM)_sun^N / G; its uncertainty (2.2e-5 relative) is all from G. */
export const M_SUN_KG = GM_SUN / G_SI;
/** Absolute bolometric magnitude of the nominal Sun on the IAU 2015 B2 scale (about 4.74). */
export const MBOL_SUN = -2.5 * Math.log10(L_SUN_W / L0_BOL_W);
/** log10 of the nominal solar surface gravity in cm s^-2 (about 4.438). */
export const LOGG_SUN = Math.log10((GM_SUN / (R_SUN_M * R_SUN_M)) * 100);
/** Jupiter and Earth masses in solar masses (ratio of the nominal mass parameters). */
export const M_JUP_IN_SUN = GM_JUP / GM_SUN;
export const M_EARTH_IN_SUN = GM_EARTH / GM_SUN;

export const CONSTANTS: readonly ConstantEntry[] = [
  { symbol: 'L_sun', value: L_SUN_W, unit: 'W', source: 'IAU 2015 Resolution B3 (nominal)' },
  { symbol: 'R_sun', value: R_SUN_M, unit: 'm', source: 'IAU 2015 Resolution B3 (nominal)' },
  { symbol: 'Teff_sun', value: TEFF_SUN_K, unit: 'K', source: 'IAU 2015 Resolution B3 (nominal)' },
  { symbol: '(GM)_sun', value: GM_SUN, unit: 'm3.s-2', source: 'IAU 2015 Resolution B3 (nominal)' },
  { symbol: 'L_0', value: L0_BOL_W, unit: 'W', source: 'IAU 2015 Resolution B2' },
  { symbol: 'au', value: AU_M, unit: 'm', source: 'IAU 2012 Resolution B2' },
  { symbol: 'pc', value: PARSEC_M, unit: 'm', source: 'IAU 2015 Resolution B2 (648000/pi au)' },
  { symbol: 'c', value: C_M_S, unit: 'm.s-1', source: 'CODATA 2018 (exact)' },
  { symbol: 'G', value: G_SI, unit: 'm3.kg-1.s-2', source: 'CODATA 2018' },
  { symbol: 'sigma_SB', value: SIGMA_SB, unit: 'W.m-2.K-4', source: 'CODATA 2018' },
  { symbol: 'sigma_T', value: SIGMA_THOMSON, unit: 'm2', source: 'CODATA 2018' },
  { symbol: 'm_p', value: M_PROTON_KG, unit: 'kg', source: 'CODATA 2018' },
  { symbol: 'M_sun', value: M_SUN_KG, unit: 'kg', source: 'derived: (GM)_sun^N / G' },
  { symbol: 'M_bol,sun', value: MBOL_SUN, unit: 'mag', source: 'derived: IAU 2015 B2 and B3' },
];
