import { describe, it, expect } from 'vitest';
import { M_SUN_KG, PARSEC_M, R_SUN_M } from '../../../rules/physics/constants.js';
import { CANONICAL_UNIT, LINEAR_FACTORS, linearFactor, type Dimension } from '../../../rules/physics/units.js';
import { QUANTITY_INFO } from '../../../rules/engine/quantities.js';

const rel = (a: number, b: number) => Math.abs(a / b - 1);

/** How many dex a value moves when read in `unit` instead of the canonical unit. */
const dexShift = (dim: Dimension, unit: string) => -Math.log10(LINEAR_FACTORS[dim][unit]);

describe('unit factors against the mix-up table (physics-reference.md §9, all [D])', () => {
  // [factor of the mix-up, its Δlog] as printed in §9; inputs are IAU 2015 B3 nominal values,
  // IAU 2012 B2 au, IAU 2015 B2 parsec and CODATA 2018 G. The sheet prints Δlog to 3 decimals
  // (one row, au, is truncated rather than rounded), hence 1e-3 on Δlog.
  const rows: Array<[dim: Dimension, unit: string, factor: number, dlog: number]> = [
    ['luminosity', 'W', 3.828e26, 26.583],
    ['luminosity', 'erg/s', 3.828e33, 33.583],
    ['mass', 'kg', 1.98841e30, 30.299],
    ['mass', 'g', 1.98841e33, 33.299],
    ['radius', 'km', 695_700, 5.842],
    ['radius', 'm', 6.957e8, 8.842],
    ['radius', 'cm', 6.957e10, 10.842],
  ];
  for (const [dim, unit, factor, dlog] of rows) {
    it(`${unit} -> ${CANONICAL_UNIT[dim]}: 1/${factor}, Δlog ${dlog}`, () => {
      expect(rel(1 / LINEAR_FACTORS[dim][unit], factor)).toBeLessThan(5e-6);
      expect(Math.abs(dexShift(dim, unit) - dlog)).toBeLessThan(1e-3);
    });
  }

  // Units smaller than the canonical one: the sheet lists the ratio canonical/unit.
  const inverse: Array<[dim: Dimension, unit: string, ratio: number, dlog: number]> = [
    ['mass', 'jupiterMass', 1047.566, 3.02], // GM ratio, IAU 2015 B3
    ['mass', 'earthMass', 332_946.1, 5.522], // GM ratio, IAU 2015 B3
    ['radius', 'jupiterRad', 9.7312, 0.988], // nominal equatorial, IAU 2015 B3
    ['radius', 'earthRad', 109.076, 2.038], // nominal equatorial, IAU 2015 B3
  ];
  for (const [dim, unit, ratio, dlog] of inverse) {
    it(`${CANONICAL_UNIT[dim]} vs ${unit}: ${ratio}, Δlog ${dlog}`, () => {
      expect(rel(1 / LINEAR_FACTORS[dim][unit], ratio)).toBeLessThan(5e-6);
      expect(Math.abs(dexShift(dim, unit) - dlog)).toBeLessThan(1e-3);
    });
  }

  it('1 au = 215.032 R_sun (Δlog 2.332 in the sheet; 2.3325 unrounded)', () => {
    expect(rel(LINEAR_FACTORS.radius.au, 215.032)).toBeLessThan(5e-6);
    expect(Math.abs(Math.log10(LINEAR_FACTORS.radius.au) - 2.332)).toBeLessThan(1e-3);
  });

  it('erg/s vs W is 1e7, 7 dex (definition of the erg: 1 erg = 1e-7 J)', () => {
    expect(LINEAR_FACTORS.luminosity.W / LINEAR_FACTORS.luminosity['erg/s']).toBeCloseTo(1e7, 3);
  });

  it('mas vs arcsec and pc vs kpc are 1000, 3 dex', () => {
    expect(LINEAR_FACTORS.angle.arcsec).toBe(1000);
    expect(LINEAR_FACTORS.distance.kpc).toBe(1000);
  });

  it('pc vs ly is 3.2616, Δlog 0.513', () => {
    expect(rel(1 / LINEAR_FACTORS.distance.lyr, 3.2616)).toBeLessThan(2e-5);
    expect(Math.abs(-Math.log10(LINEAR_FACTORS.distance.lyr) - 0.513)).toBeLessThan(1e-3);
  });
});

describe('distance and angle definitions', () => {
  it('ly = 9 460 730 472 580 800 m exactly (IAU: c x Julian year), so lyr x pc in m reproduces it', () => {
    expect(rel(LINEAR_FACTORS.distance.lyr * PARSEC_M, 9_460_730_472_580_800)).toBeLessThan(1e-15);
  });

  it('1 pc = 3.261564 ly ([D] §7) and the ly-to-pc factor 0.3066013937 (docs.rs celestial-coords, [C] §7)', () => {
    expect(rel(1 / LINEAR_FACTORS.distance.lyr, 3.261564)).toBeLessThan(1e-6);
    expect(rel(LINEAR_FACTORS.distance.lyr, 0.3066013937)).toBeLessThan(1e-9);
  });

  it('1 deg = 3600 arcsec = 3.6e6 mas (sexagesimal definition, common practice)', () => {
    expect(LINEAR_FACTORS.angle.deg).toBe(3.6e6);
  });
});

describe('worked conversions from the sheet', () => {
  it('the nominal Sun in kg, m and W converts to exactly 1 (round trip through constants.ts)', () => {
    expect(M_SUN_KG * LINEAR_FACTORS.mass.kg).toBeCloseTo(1, 14);
    expect(R_SUN_M * LINEAR_FACTORS.radius.m).toBeCloseTo(1, 14);
    expect(3.828e26 * LINEAR_FACTORS.luminosity.W).toBeCloseTo(1, 14);
  });

  it('hydrogen-burning limit 0.075 M_sun = 78.6 M_Jup; deuterium limit 13 M_Jup = 0.0124 M_sun ([D] §6)', () => {
    expect(0.075 / LINEAR_FACTORS.mass.jupiterMass).toBeCloseTo(78.6, 1);
    expect(13 * LINEAR_FACTORS.mass.jupiterMass).toBeCloseTo(0.0124, 4);
  });

  it('a WD radius of 0.87-2.2 Earth radii is 0.008-0.02 R_sun ([D] §9)', () => {
    expect(0.87 * LINEAR_FACTORS.radius.earthRad).toBeCloseTo(0.008, 3);
    expect(2.2 * LINEAR_FACTORS.radius.earthRad).toBeCloseTo(0.02, 3);
  });
});

describe('table shape', () => {
  const expected: Record<Dimension, string[]> = {
    luminosity: ['W', 'erg/s', 'solLum'],
    mass: ['kg', 'g', 'solMass', 'jupiterMass', 'earthMass'],
    radius: ['m', 'km', 'cm', 'solRad', 'jupiterRad', 'earthRad', 'au'],
    distance: ['pc', 'kpc', 'lyr'],
    angle: ['mas', 'arcsec', 'deg'],
    temperature: ['K'],
  };

  it('holds exactly the VOUnits spellings of each dimension, all positive and finite', () => {
    for (const dim of Object.keys(expected) as Dimension[]) {
      expect(Object.keys(LINEAR_FACTORS[dim]).sort()).toEqual([...expected[dim]].sort());
      for (const f of Object.values(LINEAR_FACTORS[dim])) expect(f > 0 && Number.isFinite(f)).toBe(true);
    }
  });

  it('the canonical unit of every dimension has factor 1 and matches the engine quantities', () => {
    for (const dim of Object.keys(CANONICAL_UNIT) as Dimension[]) {
      expect(LINEAR_FACTORS[dim][CANONICAL_UNIT[dim]]).toBe(1);
    }
    expect(CANONICAL_UNIT.luminosity).toBe(QUANTITY_INFO.luminosity.unit);
    expect(CANONICAL_UNIT.mass).toBe(QUANTITY_INFO.mass.unit);
    expect(CANONICAL_UNIT.radius).toBe(QUANTITY_INFO.radius.unit);
    expect(CANONICAL_UNIT.distance).toBe(QUANTITY_INFO.distance.unit);
    expect(CANONICAL_UNIT.angle).toBe(QUANTITY_INFO.parallax.unit);
    expect(CANONICAL_UNIT.temperature).toBe(QUANTITY_INFO.teff.unit);
  });

  it('linearFactor looks up own keys only', () => {
    expect(linearFactor('radius', 'km')).toBe(LINEAR_FACTORS.radius.km);
    expect(linearFactor('radius', 'kg')).toBeUndefined();
    expect(linearFactor('mass', 'Msun')).toBeUndefined();
    expect(linearFactor('mass', 'constructor')).toBeUndefined();
    expect(linearFactor('angle', 'toString')).toBeUndefined();
  });
});
