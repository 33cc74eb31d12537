import { describe, it, expect } from 'vitest';
import {
  AU_M,
  CONSTANTS,
  C_M_S,
  GM_EARTH,
  GM_JUP,
  GM_SUN,
  G_SI,
  L0_BOL_W,
  LOGG_SUN,
  L_SUN_W,
  MBOL_SUN,
  M_EARTH_IN_SUN,
  M_JUP_IN_SUN,
  M_PROTON_KG,
  M_SUN_KG,
  PARSEC_M,
  R_EARTH_M,
  R_JUP_M,
  R_SUN_M,
  SIGMA_SB,
  SIGMA_THOMSON,
  TEFF_SUN_K,
} from '../../../rules/physics/constants.js';

/** |a/b - 1|: the tolerances below are relative, as the sheet states them. */
const rel = (a: number, b: number) => Math.abs(a / b - 1);

describe('IAU 2015 Resolution B3 nominal values', () => {
  // Exact by definition, so exact equality. IAU 2015 B3, [C] physics-reference.md §1 (seen in
  // astropy iau2015.py); planetary values [C] §9 (astropy iau2015.py).
  it('solar conversion constants', () => {
    expect(L_SUN_W).toBe(3.828e26);
    expect(R_SUN_M).toBe(6.957e8);
    expect(TEFF_SUN_K).toBe(5772);
    expect(GM_SUN).toBe(1.3271244e20);
  });

  it('planetary mass parameters and equatorial radii', () => {
    expect(GM_JUP).toBe(1.2668653e17);
    expect(GM_EARTH).toBe(3.986004e14);
    expect(R_JUP_M).toBe(7.1492e7);
    expect(R_EARTH_M).toBe(6.3781e6);
  });
});

describe('IAU 2015 Resolution B2 and IAU 2012 B2', () => {
  it('bolometric zero point L_0 = 3.0128e28 W (IAU 2015 B2, [C] §1)', () => {
    expect(L0_BOL_W).toBe(3.0128e28);
  });

  it('au = 149 597 870 700 m exactly (IAU 2012 B2, [C] §1)', () => {
    expect(AU_M).toBe(149_597_870_700);
  });

  it('parsec = 648000/pi au = 3.0856776e16 m = 206 264.806 au (IAU 2015 B2, [C] §1; numeric value [D])', () => {
    // The sheet prints 8 significant figures, so 1e-8 is the tightest fair tolerance.
    expect(rel(PARSEC_M, 3.0856776e16)).toBeLessThan(1e-8);
    expect(PARSEC_M / AU_M).toBeCloseTo(206_264.806, 3);
  });
});

describe('CODATA 2018', () => {
  // Values as published in CODATA 2018, [C] physics-reference.md §2 (seen in astropy
  // codata2018.py). Pinned to the 2018 edition: CODATA 2022 moves m_p and sigma_T at the 1e-9
  // level (§2, trap T11), so a silent switch of edition must fail here.
  it('defining and measured constants', () => {
    expect(C_M_S).toBe(299_792_458);
    expect(G_SI).toBe(6.6743e-11);
    expect(SIGMA_SB).toBe(5.670374419e-8);
    expect(SIGMA_THOMSON).toBe(6.6524587321e-29);
    expect(M_PROTON_KG).toBe(1.67262192369e-27);
  });

  it('the CODATA 2022 values are not the ones in use (CODATA 2022, [C] §2)', () => {
    expect(M_PROTON_KG).not.toBe(1.67262192595e-27);
    expect(SIGMA_THOMSON).not.toBe(6.6524587051e-29);
  });

  it('sigma_SB follows from the exact h, k and c (CODATA 2018, [C] §2)', () => {
    // sigma = 2 pi^5 k^4 / (15 h^3 c^2); h and k are exact in the 2019 SI (CODATA 2018, §2).
    const h = 6.62607015e-34;
    const k = 1.380649e-23;
    const sigma = (2 * Math.PI ** 5 * k ** 4) / (15 * h ** 3 * C_M_S ** 2);
    expect(rel(sigma, 5.6703744191844e-8)).toBeLessThan(1e-12);
    expect(rel(SIGMA_SB, sigma)).toBeLessThan(1e-9);
  });
});

describe('derived solar values', () => {
  it('M_sun = (GM)_sun^N / G = 1.988409871e30 kg (derived from IAU 2015 B3 and CODATA 2018, [D] §1)', () => {
    expect(rel(M_SUN_KG, 1.988409871e30)).toBeLessThan(1e-9);
    // docs.rs tara constants print 1.98840987e30 ([C] §1).
    expect(rel(M_SUN_KG, 1.98840987e30)).toBeLessThan(1e-8);
  });

  it('M_bol,sun = 4.7399959, "approximately 4.74" (IAU 2015 B2 abstract [C]; exact value [D] §1)', () => {
    expect(MBOL_SUN).toBeCloseTo(4.7399959, 7);
    expect(MBOL_SUN).toBeCloseTo(4.74, 2);
  });

  it('logg_sun = 4.438068 cgs (derived from IAU 2015 B3 nominal values, [D] §1)', () => {
    expect(LOGG_SUN).toBeCloseTo(4.438068, 6);
    // g_sun = 274.200 m s^-2 ([D] §1).
    expect(10 ** LOGG_SUN / 100).toBeCloseTo(274.2, 3);
  });

  it('logg_sun agrees with Mamajek 4.43812 +- 0.00013 once his R = 695 660 km is used ([C] §1)', () => {
    // The 0.00005 dex offset between 4.43807 and 4.43812 is the radius choice, not an error.
    const loggMamajek = Math.log10((GM_SUN / (6.9566e8 * 6.9566e8)) * 100);
    expect(Math.abs(loggMamajek - 4.43812)).toBeLessThan(0.00013);
  });

  it('m_bol,sun is about -26.832 (IAU 2015 B2 abstract, [C] §1)', () => {
    // B2 zero point of apparent bolometric magnitude, [C] §1.
    const f0 = 2.518021002e-8;
    // From the nominal irradiance S^N = 1361 W m^-2 (IAU 2015 B3, [C] §1): the sheet's -26.831997 [D].
    const fromIrradiance = -2.5 * Math.log10(1361 / f0);
    expect(fromIrradiance).toBeCloseTo(-26.831997, 5);
    // From L_sun^N spread over 1 au: 0.00013 mag brighter, because the nominal values were each
    // rounded on their own ([D] §1: 4 pi au^2 S^N = 0.99988 L_sun^N).
    const fromLuminosity = -2.5 * Math.log10(L_SUN_W / (4 * Math.PI * AU_M * AU_M) / f0);
    expect(fromLuminosity).toBeCloseTo(-26.832, 3);
    expect((4 * Math.PI * AU_M * AU_M * 1361) / L_SUN_W).toBeCloseTo(0.99988, 5);
  });

  it('Jupiter and Earth masses as GM ratios: 1/1047.566 and 1/332 946.1 M_sun (derived from IAU 2015 B3, [D] §9)', () => {
    expect(rel(1 / M_JUP_IN_SUN, 1047.566)).toBeLessThan(1e-6);
    expect(rel(1 / M_EARTH_IN_SUN, 332_946.1)).toBeLessThan(1e-6);
  });
});

describe('CONSTANTS table', () => {
  it('every entry names a source and repeats the exported value', () => {
    const bySymbol = new Map(CONSTANTS.map((c) => [c.symbol, c.value]));
    expect(bySymbol.get('L_sun')).toBe(L_SUN_W);
    expect(bySymbol.get('G')).toBe(G_SI);
    expect(bySymbol.get('pc')).toBe(PARSEC_M);
    expect(bySymbol.get('M_bol,sun')).toBe(MBOL_SUN);
    for (const c of CONSTANTS) {
      expect(c.source.length, c.symbol).toBeGreaterThan(0);
      expect(Number.isFinite(c.value), c.symbol).toBe(true);
    }
  });
});
