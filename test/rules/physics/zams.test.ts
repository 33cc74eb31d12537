import { describe, it, expect } from 'vitest';
import { loggFromMassRadius, teffFromLuminosityRadius } from '../../../rules/physics/stellar.js';
import {
  TOUT_MAX_MASS,
  TOUT_MIN_MASS,
  metallicityFromFeH,
  toutZamsLuminosity,
  toutZamsRadius,
} from '../../../rules/physics/zams.js';

const rel = (a: number, b: number) => Math.abs(a / b - 1);

describe('Tout, Pols, Eggleton & Han 1996 (MNRAS 281, 257) ZAMS L and R', () => {
  // Check values [D] physics-reference.md §5: the formula of AMUSE zfuncs.f lzamsf/rzamsf [C]
  // evaluated with the coefficient table seen in HeRD ZeroAgeMainSequence.cpp [C]. They are not
  // the paper's own tabulated values, so they guard against a typo in the coefficients.
  const table: Array<[z: number, m: number, l: number, r: number, teff: number, logg: number]> = [
    [0.02, 0.1, 9.5825e-4, 0.1305, 2812, 5.207],
    [0.02, 0.5, 0.037874, 0.4588, 3759, 4.814],
    [0.02, 1.0, 0.69772, 0.88824, 5597, 4.541],
    [0.02, 2.0, 15.891, 1.6102, 9082, 4.325],
    [0.02, 10, 5551.9, 3.9419, 25_095, 4.247],
    [0.02, 20, 42_845, 5.999, 33_905, 4.183],
    [0.02, 100, 1.2707e6, 17.226, 46_692, 3.966],
    [0.001, 1.0, 1.4562, 0.8945, 6704, 4.535],
    [0.0001, 1.0, 1.5863, 0.84, 7068, 4.59],
    [0.0001, 100, 1.2412e6, 9.2383, 63_386, 4.507],
  ];
  for (const [z, m, l, r, teff, logg] of table) {
    it(`Z = ${z}, M = ${m}: L = ${l}, R = ${r}`, () => {
      const lum = toutZamsLuminosity(m, z);
      const rad = toutZamsRadius(m, z);
      expect(rel(lum, l)).toBeLessThan(1e-3);
      expect(rel(rad, r)).toBeLessThan(1e-3);
      // Teff and logg with IAU 2015 B3 nominal constants, same rows of §5.
      expect(rel(teffFromLuminosityRadius(lum, rad), teff)).toBeLessThan(1e-3);
      expect(loggFromMassRadius(m, rad)).toBeCloseTo(logg, 3);
    });
  }

  it('metallicity defaults to Z = 0.02', () => {
    expect(toutZamsLuminosity(1)).toBe(toutZamsLuminosity(1, 0.02));
    expect(toutZamsRadius(1)).toBe(toutZamsRadius(1, 0.02));
  });

  it('solar-mass anchors L ~ 0.69, R ~ 0.89 quoted in two public plan and test files ([C] §5)', () => {
    expect(toutZamsLuminosity(1)).toBeCloseTo(0.69, 1);
    expect(toutZamsRadius(1)).toBeCloseTo(0.89, 2);
  });

  it('the present Sun sits 0.156 dex above its ZAMS luminosity ([D] §5, trap T7)', () => {
    expect(-Math.log10(toutZamsLuminosity(1))).toBeCloseTo(0.156, 3);
  });

  it('returns NaN outside 0.1-100 M_sun and 1e-4-0.03 in Z, the validity range quoted in code docstrings ([C] §5)', () => {
    expect(TOUT_MIN_MASS).toBe(0.1);
    expect(TOUT_MAX_MASS).toBe(100);
    for (const m of [0.0999, 100.01, 0, -1, NaN]) {
      expect(toutZamsLuminosity(m), `M = ${m}`).toBeNaN();
      expect(toutZamsRadius(m), `M = ${m}`).toBeNaN();
    }
    for (const z of [5e-5, 0.031, NaN]) {
      expect(toutZamsLuminosity(1, z), `Z = ${z}`).toBeNaN();
      expect(toutZamsRadius(1, z), `Z = ${z}`).toBeNaN();
    }
    expect(Number.isFinite(toutZamsLuminosity(0.1))).toBe(true);
    expect(Number.isFinite(toutZamsRadius(100, 0.03))).toBe(true);
  });
});

describe('metallicityFromFeH', () => {
  // Z = 0.02 x 10^[Fe/H], scaled to the Tout normalisation Z = 0.02: common practice.
  it('maps [Fe/H] = 0, -1, +0.176 to Z = 0.02, 0.002, 0.03', () => {
    expect(metallicityFromFeH(0)).toBe(0.02);
    expect(metallicityFromFeH(-1)).toBeCloseTo(0.002, 12);
    expect(metallicityFromFeH(Math.log10(1.5))).toBeCloseTo(0.03, 12);
  });
});
