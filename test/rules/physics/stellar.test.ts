import { describe, it, expect } from 'vitest';
import { L_SUN_W, R_SUN_M, SIGMA_SB, TEFF_SUN_K } from '../../../rules/physics/constants.js';
import {
  distanceFromParallax,
  distanceModulus,
  logLuminosityFromRadiusTeff,
  loggFromMassRadius,
  luminosityFromMbol,
  luminosityFromRadiusTeff,
  mbolFromLuminosity,
  radiusFromMassLogg,
  teffFromLuminosityRadius,
} from '../../../rules/physics/stellar.js';

const rel = (a: number, b: number) => Math.abs(a / b - 1);

describe('Stefan-Boltzmann law', () => {
  /** 4 pi R^2 sigma T^4 in SI, returned in L_sun: the form the solar-unit function stands for. */
  const siLuminosity = (rSun: number, t: number) =>
    (4 * Math.PI * (rSun * R_SUN_M) ** 2 * SIGMA_SB * t ** 4) / L_SUN_W;

  it('R = 1, T = 5772 K gives 0.9999976 L_sun in SI (CODATA 2018 sigma, IAU 2015 B3; [D] physics-reference.md §1, §11)', () => {
    expect(rel(siLuminosity(1, 5772), 0.9999976)).toBeLessThan(1e-7);
    expect(rel(siLuminosity(2, 5772), 3.99999)).toBeLessThan(1e-6);
  });

  it('the solar-unit form agrees with SI within 3e-6, the nominal values\' own inconsistency ([D] §1)', () => {
    for (const [r, t] of [[1, 5772], [2, 5772], [0.5, 3500], [10, 25_000]] as const) {
      expect(rel(luminosityFromRadiusTeff(r, t), siLuminosity(r, t))).toBeLessThan(3e-6);
    }
  });

  it('is exact at the nominal Sun in solar units (IAU 2015 B3 defines Teff_sun = 5772 K)', () => {
    expect(luminosityFromRadiusTeff(1, TEFF_SUN_K)).toBe(1);
    expect(luminosityFromRadiusTeff(2, TEFF_SUN_K)).toBe(4);
  });

  it('Teff from L_sun^N and R_sun^N in SI is 5772.003 K ([D] §1)', () => {
    const t = (L_SUN_W / (4 * Math.PI * R_SUN_M ** 2 * SIGMA_SB)) ** 0.25;
    expect(t).toBeCloseTo(5772.003, 3);
    expect(Math.abs(teffFromLuminosityRadius(1, 1) - t)).toBeLessThan(0.01);
  });

  it('log form matches the linear form and survives values whose linear L would overflow', () => {
    expect(logLuminosityFromRadiusTeff(1.713, 9845)).toBeCloseTo(Math.log10(luminosityFromRadiusTeff(1.713, 9845)), 12);
    expect(logLuminosityFromRadiusTeff(1e160, 5772)).toBeCloseTo(320, 9);
    expect(luminosityFromRadiusTeff(1e160, 5772)).toBe(Infinity);
  });

  it('teffFromLuminosityRadius inverts luminosityFromRadiusTeff', () => {
    expect(teffFromLuminosityRadius(luminosityFromRadiusTeff(3.3, 12_345), 3.3)).toBeCloseTo(12_345, 6);
  });
});

describe('surface gravity', () => {
  // [D] physics-reference.md §11 from IAU 2015 B3 GM_sun and R_sun; masses and radii of Sirius
  // from Bond et al. 2017 as quoted in §6 [C].
  it('(M, R) = (1, 1) -> 4.438068; (1.018, 0.008098) -> 8.62906; (2.063, 1.713) -> 4.28505', () => {
    expect(loggFromMassRadius(1, 1)).toBeCloseTo(4.438068, 6);
    expect(loggFromMassRadius(1.018, 0.008098)).toBeCloseTo(8.62906, 5);
    expect(loggFromMassRadius(2.063, 1.713)).toBeCloseTo(4.28505, 5);
  });

  it('radiusFromMassLogg inverts it', () => {
    expect(radiusFromMassLogg(1.018, loggFromMassRadius(1.018, 0.008098))).toBeCloseTo(0.008098, 12);
    expect(radiusFromMassLogg(1, 4.438068)).toBeCloseTo(1, 6);
  });

  it('the Sun in SI shows logg = 2.44 ([D] §9: the 2 dex cgs/SI mix-up)', () => {
    expect(loggFromMassRadius(1, 1) - 2).toBeCloseTo(2.44, 2);
  });
});

describe('bolometric magnitude on the IAU 2015 B2 scale', () => {
  it('L = 1, 100, 1e6, 1e-3, 24.7 L_sun -> 4.7400, -0.2600, -10.2600, 12.2400, 1.25825 ([D] §7, §11)', () => {
    expect(mbolFromLuminosity(1)).toBeCloseTo(4.74, 4);
    expect(mbolFromLuminosity(100)).toBeCloseTo(-0.26, 4);
    expect(mbolFromLuminosity(1e6)).toBeCloseTo(-10.26, 4);
    expect(mbolFromLuminosity(1e-3)).toBeCloseTo(12.24, 4);
    expect(mbolFromLuminosity(24.7)).toBeCloseTo(1.25825, 5);
  });

  it('M_bol = 0 at L_0 = 3.0128e28 W (IAU 2015 B2, [C] §1)', () => {
    expect(mbolFromLuminosity(3.0128e28 / L_SUN_W)).toBeCloseTo(0, 12);
  });

  it('luminosityFromMbol inverts it, and 1 mag is 0.4 dex (trap T1, definition of the magnitude scale)', () => {
    for (const l of [1e-4, 0.5, 1, 24.7, 3e5]) {
      expect(rel(luminosityFromMbol(mbolFromLuminosity(l)), l)).toBeLessThan(1e-12);
    }
    expect(Math.log10(luminosityFromMbol(3) / luminosityFromMbol(4))).toBeCloseTo(0.4, 12);
  });
});

describe('parallax, distance and distance modulus', () => {
  it('100 mas -> 10 pc, mu = 0; 1 mas -> 1000 pc, mu = 10 ([D] §7, from d = 1000/parallax, the parsec definition)', () => {
    expect(distanceFromParallax(100)).toBe(10);
    expect(distanceModulus(10)).toBe(0);
    expect(distanceFromParallax(1)).toBe(1000);
    expect(distanceModulus(1000)).toBeCloseTo(10, 12);
  });

  it('Sirius: parallax 379.21 mas -> 2.6371 pc, mu = -2.8944 ([C] parallax §6, [D] §7 and §11)', () => {
    const d = distanceFromParallax(379.21);
    expect(d).toBeCloseTo(2.6371, 4);
    expect(distanceModulus(d)).toBeCloseTo(-2.8944, 4);
    // V = -1.46 and quoted M_V = +1.43 ([C] §6, Wikipedia "Sirius" mirror).
    expect(-1.46 - distanceModulus(d)).toBeCloseTo(1.43, 2);
  });

  it('non-positive or missing parallaxes have no distance ([C] §7: public helpers reject parallax <= 0)', () => {
    expect(distanceFromParallax(0)).toBeNaN();
    expect(distanceFromParallax(-0.5)).toBeNaN();
    expect(distanceFromParallax(NaN)).toBeNaN();
  });
});

describe('reference stars: Sirius A and B (physics-reference.md §6)', () => {
  // Inputs [C]: Bond et al. 2017 masses (CDS J/ApJ/840/70) and the radii, luminosities and Teff
  // quoted on the Wikipedia "Sirius" mirror. Results [D] §6.
  it('Sirius A: logg 4.285 from M and R, 0.05 dex below the quoted 4.33 (trap T9)', () => {
    const logg = loggFromMassRadius(2.063, 1.713);
    expect(logg).toBeCloseTo(4.285, 3);
    expect(4.33 - logg).toBeCloseTo(0.045, 3);
  });

  it('Sirius A: Stefan-Boltzmann L = 24.84 from R = 1.713, Teff = 9845 K, within 0.6 % of the quoted 24.7', () => {
    const l = luminosityFromRadiusTeff(1.713, 9845);
    expect(l).toBeCloseTo(24.84, 1);
    expect(rel(l, 24.7)).toBeLessThan(0.006);
    expect(mbolFromLuminosity(24.7)).toBeCloseTo(1.258, 3);
  });

  it('Sirius B: Teff 25 370 K from L = 0.02448 and R = 0.008098 (quoted about 25 000 K); logg 8.63', () => {
    expect(Math.abs(teffFromLuminosityRadius(0.02448, 0.008098) - 25_370)).toBeLessThan(5);
    expect(loggFromMassRadius(1.018, 0.008098)).toBeCloseTo(8.63, 2);
  });
});
