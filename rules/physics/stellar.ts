import { L0_BOL_W, L_SUN_W, LOGG_SUN, MBOL_SUN, TEFF_SUN_K } from './constants.js';

/** Stefan-Boltzmann law in nominal solar units: L/L_sun = (R/R_sun)^2 (Teff / 5772 K)^4. */
export function luminosityFromRadiusTeff(radiusSun: number, teffK: number): number {
  const t = teffK / TEFF_SUN_K;
  return radiusSun * radiusSun * t * t * t * t;
}

/** log10 of the Stefan-Boltzmann luminosity, without forming the possibly huge linear value. */
export function logLuminosityFromRadiusTeff(radiusSun: number, teffK: number): number {
  return 2 * Math.log10(radiusSun) + 4 * Math.log10(teffK / TEFF_SUN_K);
}

/** Effective temperature in K from L (L_sun) and R (R_sun). */
export function teffFromLuminosityRadius(lumSun: number, radiusSun: number): number {
  return TEFF_SUN_K * Math.pow(lumSun / (radiusSun * radiusSun), 0.25);
}

/** Surface gravity log10(g / cm s^-2) from M (M_sun) and R (R_sun): logg_sun + log M - 2 log R. */
export function loggFromMassRadius(massSun: number, radiusSun: number): number {
  return LOGG_SUN + Math.log10(massSun) - 2 * Math.log10(radiusSun);
}

/** Radius in R_sun from M (M_sun) and logg (cgs). */
export function radiusFromMassLogg(massSun: number, logg: number): number {
  return Math.sqrt(massSun * Math.pow(10, LOGG_SUN - logg));
}

/** Absolute bolometric magnitude on the IAU 2015 B2 scale: M_bol = -2.5 log10(L / L_0). */
export function mbolFromLuminosity(lumSun: number): number {
  return -2.5 * Math.log10((lumSun * L_SUN_W) / L0_BOL_W);
}

/** Luminosity in L_sun from an absolute bolometric magnitude on the IAU 2015 B2 scale. */
export function luminosityFromMbol(mbol: number): number {
  return Math.pow(10, -0.4 * (mbol - MBOL_SUN));
}

/** Distance in pc from a parallax in mas; NaN for non-positive parallaxes (1/parallax undefined). */
export function distanceFromParallax(parallaxMas: number): number {
  return parallaxMas > 0 ? 1000 / parallaxMas : NaN;
}

/** Distance modulus m - M = 5 log10(d / pc) - 5, without extinction. */
export function distanceModulus(distancePc: number): number {
  return 5 * Math.log10(distancePc) - 5;
}
