import { describe, expect, it } from 'vitest';
import { BindingError } from '../../../cli/binding/types.js';
import { isNoUnit, parseUnit, unitForQuantity } from '../../../cli/binding/units.js';

/** Relative closeness; the §9 factors are quoted to 4-7 significant figures. */
function close(actual: number, expected: number, rel: number): void {
  expect(Math.abs(actual / expected - 1)).toBeLessThan(rel);
}

describe('parseUnit: spellings', () => {
  const cases: [string, string, boolean, string][] = [
    // text, dimension, log, canonical
    ['solLum', 'luminosity', false, 'solLum'],
    ['Lsun', 'luminosity', false, 'solLum'],
    ['L_sun', 'luminosity', false, 'solLum'],
    ['Lsol', 'luminosity', false, 'solLum'],
    ['L_Sun', 'luminosity', false, 'solLum'],
    ['LSUN', 'luminosity', false, 'solLum'],
    ['W', 'luminosity', false, 'W'],
    ['erg/s', 'luminosity', false, 'erg/s'],
    ['erg.s-1', 'luminosity', false, 'erg/s'],
    ['erg.s**-1', 'luminosity', false, 'erg/s'],
    ['erg s-1', 'luminosity', false, 'erg/s'],
    ['erg s^-1', 'luminosity', false, 'erg/s'],
    ['erg/sec', 'luminosity', false, 'erg/s'],
    ['log(solLum)', 'luminosity', true, 'log(solLum)'],
    ['dex(solLum)', 'luminosity', true, 'log(solLum)'],
    ['log Lsun', 'luminosity', true, 'log(solLum)'],
    ['log(L/Lsun)', 'luminosity', true, 'log(solLum)'],
    ['log(L/L.)', 'luminosity', true, 'log(solLum)'],
    // CDS: a unit in square brackets is its decimal log.
    ['[Lsun]', 'luminosity', true, 'log(solLum)'],
    ['solMass', 'mass', false, 'solMass'],
    ['Msun', 'mass', false, 'solMass'],
    ['Msol', 'mass', false, 'solMass'],
    ['M_sun', 'mass', false, 'solMass'],
    ['Solar mass', 'mass', false, 'solMass'],
    ['kg', 'mass', false, 'kg'],
    ['g', 'mass', false, 'g'],
    ['jupiterMass', 'mass', false, 'jupiterMass'],
    ['Mjup', 'mass', false, 'jupiterMass'],
    ['MJup', 'mass', false, 'jupiterMass'],
    ['M_J', 'mass', false, 'jupiterMass'],
    ['earthMass', 'mass', false, 'earthMass'],
    ['Mearth', 'mass', false, 'earthMass'],
    ['M_E', 'mass', false, 'earthMass'],
    ['solRad', 'radius', false, 'solRad'],
    ['Rsun', 'radius', false, 'solRad'],
    ['Rsol', 'radius', false, 'solRad'],
    ['R_sun', 'radius', false, 'solRad'],
    ['jupiterRad', 'radius', false, 'jupiterRad'],
    ['Rjup', 'radius', false, 'jupiterRad'],
    ['earthRad', 'radius', false, 'earthRad'],
    ['Rearth', 'radius', false, 'earthRad'],
    ['au', 'radius', false, 'au'],
    ['km', 'radius', false, 'km'],
    ['m', 'radius', false, 'm'],
    ['cm', 'radius', false, 'cm'],
    ['K', 'temperature', false, 'K'],
    ['cm.s-2', 'gravity', false, 'cm.s-2'],
    ['cm/s2', 'gravity', false, 'cm.s-2'],
    ['cm/s**2', 'gravity', false, 'cm.s-2'],
    ['m.s-2', 'gravity', false, 'm.s-2'],
    ['log(cm.s-2)', 'gravity', true, 'log(cm.s-2)'],
    ['log10(cm/s**2)', 'gravity', true, 'log(cm.s-2)'],
    ['[cm/s2]', 'gravity', true, 'log(cm.s-2)'],
    ['dex(cgs)', 'gravity', true, 'log(cm.s-2)'],
    ['cgs', 'gravity', true, 'log(cm.s-2)'],
    ['dex', 'dex', false, 'dex'],
    ['[Sun]', 'dex', false, 'dex'],
    ['mas', 'angle', false, 'mas'],
    ['arcsec', 'angle', false, 'arcsec'],
    ['deg', 'angle', false, 'deg'],
    ['pc', 'distance', false, 'pc'],
    ['kpc', 'distance', false, 'kpc'],
    ['KPC', 'distance', false, 'kpc'],
    ['mag', 'magnitude', false, 'mag'],
    ['', 'dimensionless', false, ''],
  ];
  it.each(cases)('%s', (text, dimension, log, canonical) => {
    const u = parseUnit(text);
    expect(u.dimension).toBe(dimension);
    expect(u.log).toBe(log);
    expect(u.canonical).toBe(canonical);
  });

  it('reads NASA-archive unit text when told which quantity (`log10(Solar)` on st_lum)', () => {
    expect(parseUnit('log10(Solar)', 'luminosity').canonical).toBe('log(solLum)');
    expect(parseUnit('Solar Radius').canonical).toBe('solRad');
    expect(() => parseUnit('Solar')).toThrow(/solar units of what/);
  });

  it('gives back every canonical spelling unchanged (the binder re-parses what it wrote)', () => {
    for (const [text] of cases) {
      const u = parseUnit(text);
      const again = parseUnit(u.canonical);
      expect(again.canonical).toBe(u.canonical);
      expect(again.log).toBe(u.log);
      expect(again.factor).toBeCloseTo(u.factor, 12);
    }
  });

  it('keeps case where VOUnits does: Mpc is not mpc, and single letters do not fold', () => {
    expect(parseUnit('Mpc').factor).toBe(1e6);
    expect(parseUnit('mpc').factor).toBeCloseTo(1e-3, 15);
    expect(() => parseUnit('M')).toThrow(BindingError);
    expect(() => parseUnit('G')).toThrow(BindingError);
  });

  it('accepts a leading scale factor (`1e26W`, CDS `10+33erg/s`)', () => {
    close(parseUnit('1e26W').factor, 1e26 / 3.828e26, 1e-12);
    close(parseUnit('10+33erg/s').factor, 1e33 * 1e-7 / 3.828e26, 1e-12);
  });
});

describe('parseUnit: unknown units are BindingErrors', () => {
  it.each(['furlong', 'Lsun/yr', 'log(log(K))', 'ln(K)', 'erg/cm2/s', '0x10W'])('%s', (text) => {
    expect(() => parseUnit(text)).toThrow(BindingError);
    expect(() => parseUnit(text)).toThrow(/unknown unit/);
  });
});

// Expected values: physics-reference.md §9 "Unit factors and how mix-ups show up in log space",
// which derives them from IAU 2015 Resolutions B2/B3 and CODATA 2018.
describe('factors against physics-reference.md §9', () => {
  it('L in W and erg/s vs L_sun: 3.828e26 and 3.828e33 (IAU 2015 B3 nominal L_sun)', () => {
    close(1 / parseUnit('W').factor, 3.828e26, 1e-12);
    close(1 / parseUnit('erg/s').factor, 3.828e33, 1e-12);
    expect(-Math.log10(parseUnit('W').factor)).toBeCloseTo(26.583, 3);
    expect(-Math.log10(parseUnit('erg/s').factor)).toBeCloseTo(33.583, 3);
  });

  it('M in kg and g vs M_sun: 1.98841e30 and 1.98841e33', () => {
    close(1 / parseUnit('kg').factor, 1.98841e30, 1e-5);
    close(1 / parseUnit('g').factor, 1.98841e33, 1e-5);
  });

  it('M_sun vs M_Jup 1047.566 and vs M_Earth 332 946.1 (GM ratios)', () => {
    close(1 / parseUnit('jupiterMass').factor, 1047.566, 1e-6);
    close(1 / parseUnit('earthMass').factor, 332946.1, 1e-6);
  });

  it('R in km, m, cm vs R_sun: 695 700, 6.957e8, 6.957e10; R_Jup 9.7312, R_Earth 109.076; 1 au = 215.032 R_sun', () => {
    close(1 / parseUnit('km').factor, 695700, 1e-12);
    close(1 / parseUnit('m').factor, 6.957e8, 1e-12);
    close(1 / parseUnit('cm').factor, 6.957e10, 1e-12);
    close(1 / parseUnit('jupiterRad').factor, 9.7312, 1e-5);
    close(1 / parseUnit('earthRad').factor, 109.076, 1e-5);
    close(parseUnit('au').factor, 215.032, 1e-5);
  });

  it('logg cgs vs SI: a factor 100', () => {
    expect(parseUnit('m.s-2').factor).toBe(100);
    expect(parseUnit('cm.s-2').factor).toBe(1);
  });

  it('mas vs arcsec and pc vs kpc: 1000; pc vs ly: 3.2616', () => {
    expect(parseUnit('arcsec').factor / parseUnit('mas').factor).toBe(1000);
    expect(parseUnit('kpc').factor / parseUnit('pc').factor).toBe(1000);
    close(1 / parseUnit('lyr').factor, 3.2616, 1e-4);
  });
});

describe('unitForQuantity', () => {
  it('lets a length serve as radius or distance', () => {
    const pcAsRadius = unitForQuantity('radius', parseUnit('pc'));
    // 1 pc = 206 264.8 au (648000/pi, IAU 2015 B2) and 1 au = 215.032 R_sun (§9).
    close(pcAsRadius!.factor, (648000 / Math.PI) * 215.032, 1e-5);
    expect(unitForQuantity('distance', parseUnit('au'))!.factor).toBeCloseTo(1 / (648000 / Math.PI), 12);
  });

  it('reads dex on a positive quantity as log10 of its canonical unit', () => {
    expect(unitForQuantity('luminosity', parseUnit('dex'))).toEqual({ log: true, factor: 1, unit: 'log(solLum)' });
    expect(unitForQuantity('logg', parseUnit('dex'))).toEqual({ log: true, factor: 1, unit: 'log(cm.s-2)' });
  });

  it('refuses a unit of another dimension', () => {
    expect(unitForQuantity('luminosity', parseUnit('K'))).toBeNull();
    expect(unitForQuantity('mass', parseUnit('solLum'))).toBeNull();
  });

  it('treats empty and CDS `---` units as undeclared', () => {
    expect(isNoUnit(null)).toBe(true);
    expect(isNoUnit(' ')).toBe(true);
    expect(isNoUnit('---')).toBe(true);
    expect(isNoUnit('K')).toBe(false);
  });
});
