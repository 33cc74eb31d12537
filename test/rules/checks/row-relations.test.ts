import { describe, expect, it } from 'vitest';
import { Relation, RowInputs, RowRelations } from '../../../rules/checks/shared/row-relations.js';
import { StarClass } from '../../../rules/physics/classify.js';
import { EKER_2018 } from '../../../rules/physics/mass-luminosity.js';
import { makeBatch } from '../../helpers/batch.js';

const LOG_TEFF_SUN = Math.log10(5772);

/** A Sun-like row (R = 1 R_sun, Teff = 5772 K: L = 1 L_sun by Stefan-Boltzmann with the IAU 2015 B3 nominal values) with log L moved by `dl`. */
function sun(dl: number): RowRelations {
  const rr = new RowRelations();
  rr.reset();
  rr.lr = 0;
  rr.lt = LOG_TEFF_SUN;
  rr.ll = dl;
  return rr;
}

describe('row relations: errors on the side that faces the relation', () => {
  it('Stefan-Boltzmann: L above 4 pi R^2 sigma T^4 is judged with its lower error, below with its upper', () => {
    const above = sun(0.3);
    above.slLo = 0.01;
    above.slHi = 0.5;
    // 0.3 dex over sqrt(0.15^2 + 0.01^2): the large upper error points away from the relation.
    expect(above.worstZ(Relation.StefanBoltzmann)).toBeCloseTo(0.3 / Math.hypot(0.15, 0.01), 6);
    const below = sun(-0.3);
    below.slLo = 0.01;
    below.slHi = 0.5;
    expect(below.worstZ(Relation.StefanBoltzmann)).toBeCloseTo(0.3 / Math.hypot(0.15, 0.5), 6);
    // R and Teff face the other way: for L too high, their upper errors (a larger R or T would mend it).
    const r = sun(0.3);
    r.srLo = 0.2;
    r.srHi = 0.01;
    expect(r.worstZ(Relation.StefanBoltzmann)).toBeCloseTo(0.3 / Math.hypot(0.15, 2 * 0.01), 6);
  });

  it('gravity: a logg above G M / R^2 takes logg`s lower error, M`s upper and R`s lower', () => {
    const rr = new RowRelations();
    rr.reset();
    rr.lm = 0;
    rr.lr = 0;
    // logg_sun = 4.438 (IAU 2015 B3 nominal GM and R, physics-reference.md §1); 0.5 dex above it.
    rr.g = 4.438068 + 0.5;
    rr.sgLo = 0.05;
    rr.sgHi = 1;
    rr.smLo = 1;
    rr.smHi = 0.05;
    rr.srLo = 0.02;
    rr.srHi = 1;
    expect(rr.worstZ(Relation.Gravity)).toBeCloseTo(0.5 / Math.sqrt(0.1 ** 2 + 0.05 ** 2 + 0.05 ** 2 + 4 * 0.02 ** 2), 3);
  });

  it('mass-luminosity: a star below the relation takes L`s upper error and M`s lower', () => {
    const rr = new RowRelations();
    rr.reset();
    rr.mainSequence = true;
    rr.lm = 0;
    // Eker 2018 Table 4 at 1 M_sun: log L = -0.007, slope 5.743, scatter 0.15 (our measurement).
    rr.ll = EKER_2018.logL(1) - 0.6;
    rr.slHi = 0.3;
    rr.slLo = 0.01;
    rr.smLo = 0.02;
    rr.smHi = 0.5;
    expect(rr.worstZ(Relation.MassLuminosity)).toBeCloseTo(0.6 / Math.sqrt(0.15 ** 2 + 0.3 ** 2 + (5.743 * 0.02) ** 2), 3);
  });

  it('the symmetric view: reading gives the mean of the two sides, writing sets both (as swapped-columns does)', () => {
    const rr = sun(0.3);
    rr.slLo = 0.1;
    rr.slHi = 0.3;
    expect(rr.sl).toBeCloseTo(0.2, 12);
    rr.sl = 0.05;
    expect([rr.slLo, rr.slHi]).toEqual([0.05, 0.05]);
  });

  it('RowInputs loads each side of the errors, in dex', () => {
    // L = 2 +1/-0.5 L_sun: log errors log(3/2) up and log(2/1.5) down; M = 1 +0.2/-0.1 M_sun: 0.2/ln 10 and 0.1/ln 10 (first order).
    const batch = makeBatch({ luminosity: { values: [2], errLo: [0.5], errHi: [1] }, mass: { values: [1], errLo: [0.1], errHi: [0.2] }, radius: { values: [1] } });
    const inputs = new RowInputs(batch, Uint8Array.of(StarClass.MainSequence));
    const rr = new RowRelations();
    inputs.load(rr, 0);
    expect(rr.slHi).toBeCloseTo(Math.log10(1.5), 9);
    expect(rr.slLo).toBeCloseTo(Math.log10(2 / 1.5), 9);
    expect(rr.smHi).toBeCloseTo(0.2 / Math.LN10, 9);
    expect(rr.smLo).toBeCloseTo(0.1 / Math.LN10, 9);
    expect(rr.srLo).toBe(0);
    expect(rr.mainSequence).toBe(true);
  });
});
