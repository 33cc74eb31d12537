import { C_M_S, GM_SUN, L_SUN_W } from './constants.js';

/**
 * Electron-scattering opacity in m^2 kg^-1 for hydrogen mass fraction X, in the rounded form
 * kappa_es = 0.02 (1 + X) m^2/kg (0.2 (1 + X) cm^2/g). The exact sigma_T (1 + X) / (2 m_p) form
 * is 0.57 % smaller; the rounded form is the convention the rule documents.
 */
export function electronScatteringOpacity(hydrogenFraction: number): number {
  return 0.02 * (1 + hydrogenFraction);
}

/**
 * Eddington luminosity per solar mass, in L_sun, for hydrogen fraction X:
 * L_Edd / M = 4 pi G M_sun c / kappa, written with the nominal (GM)_sun so no separate G or M_sun
 * (and their uncertainty) enters.
 */
export function eddingtonPerSolarMass(hydrogenFraction: number): number {
  return (4 * Math.PI * GM_SUN * C_M_S) / electronScatteringOpacity(hydrogenFraction) / L_SUN_W;
}

/** Eddington luminosity in L_sun for a mass in M_sun. It does not depend on radius. */
export function eddingtonLuminosity(massSun: number, hydrogenFraction: number): number {
  return massSun * eddingtonPerSolarMass(hydrogenFraction);
}
