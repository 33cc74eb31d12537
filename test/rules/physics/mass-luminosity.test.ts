import { describe, it, expect } from 'vitest';
import {
  CLASSIC,
  EKER_2018,
  TOUT_1996,
  toutZamsRelation,
  type MassLuminosityRelation,
} from '../../../rules/physics/mass-luminosity.js';
import { toutZamsLuminosity } from '../../../rules/physics/zams.js';

/** Central difference of log L in log M, step h dex: an independent check of slope(). */
function numericalSlope(rel: MassLuminosityRelation, m: number, h = 1e-4): number {
  const lo = m * 10 ** -h;
  const hi = m * 10 ** h;
  return (rel.logL(hi) - rel.logL(lo)) / (2 * h);
}

/** Step of log L across a break: the limit from above minus the value at the break. */
const stepAt = (rel: MassLuminosityRelation, m: number) => rel.logL(m * (1 + 1e-12)) - rel.logL(m);

describe('Eker et al. 2018 (MNRAS 479, 5491, Table 4)', () => {
  // Coefficients [C], agreeing in wind-ae Eker2018.py and myastrotools EkerMLR; the log L values are
  // [D] from them, physics-reference.md §4c, §4f and §11.
  it('log L at 0.3, 1.0, 5.0, 20 M_sun: -2.036, -0.007, 2.866, 4.832 ([D] §11)', () => {
    expect(EKER_2018.logL(0.3)).toBeCloseTo(-2.036, 3);
    expect(EKER_2018.logL(1.0)).toBeCloseTo(-0.007, 3);
    expect(EKER_2018.logL(5.0)).toBeCloseTo(2.866, 3);
    expect(EKER_2018.logL(20)).toBeCloseTo(4.832, 3);
  });

  it('the rest of the side-by-side table ([D] §4f)', () => {
    const rows: Array<[number, number]> = [[0.2, -2.394], [0.5, -1.478], [2, 1.313], [10, 3.97], [30, 5.337]];
    for (const [m, logL] of rows) expect(EKER_2018.logL(m), `M = ${m}`).toBeCloseTo(logL, 3);
  });

  it('gives no verdict outside 0.179-31 M_sun: NaN, never an extrapolation ([C] abstract range; trap T6)', () => {
    for (const m of [0.178, 0.1, 0, -1, 31.001, 60, 100, NaN, Infinity]) {
      expect(EKER_2018.logL(m), `M = ${m}`).toBeNaN();
      expect(EKER_2018.slope(m), `M = ${m}`).toBeNaN();
    }
  });

  it('includes both ends of the calibrated range 0.179 <= M <= 31 (abstract, [C] §4c)', () => {
    expect(EKER_2018.logL(0.179)).toBeCloseTo(2.028 * Math.log10(0.179) - 0.976, 12);
    expect(EKER_2018.logL(31)).toBeCloseTo(2.865 * Math.log10(31) + 1.105, 12);
  });

  it('a break mass belongs to the lower segment ("0.45 < M <= 0.72" style ranges of Table 4, [C] §4c)', () => {
    expect(EKER_2018.logL(0.45)).toBeCloseTo(2.028 * Math.log10(0.45) - 0.976, 12);
    expect(EKER_2018.logL(7)).toBeCloseTo(3.967 * Math.log10(7) + 0.093, 12);
  });

  it('steps at the breaks: -0.008, -0.072, -0.013, -0.055, +0.081 dex ([D] §4c)', () => {
    const steps: Array<[number, number]> = [[0.45, -0.008], [0.72, -0.072], [1.05, -0.013], [2.4, -0.055], [7, 0.081]];
    for (const [m, step] of steps) expect(stepAt(EKER_2018, m), `break ${m}`).toBeCloseTo(step, 3);
  });

  it('slope() is the segment exponent and matches a numerical derivative inside each segment', () => {
    const inside: Array<[number, number]> = [[0.3, 2.028], [0.6, 4.572], [0.9, 5.743], [1.5, 4.329], [4, 3.967], [15, 2.865]];
    for (const [m, a] of inside) {
      expect(EKER_2018.slope(m)).toBe(a);
      expect(numericalSlope(EKER_2018, m)).toBeCloseTo(a, 6);
    }
  });
});

describe('classic piecewise relation (physics-reference.md §4a)', () => {
  // Formulas and breaks [C] from copies of the Wikipedia "Mass-luminosity relation" article;
  // values [D] §4f.
  it('log L at the side-by-side masses ([D] §4f)', () => {
    const rows: Array<[number, number]> = [
      [0.2, -2.246], [0.5, -1.204], [1, 0], [2, 1.2], [5, 2.593],
      [10, 3.646], [20, 4.7], [30, 5.316], [60, 6.283], [100, 6.505],
    ];
    for (const [m, logL] of rows) expect(CLASSIC.logL(m), `M = ${m}`).toBeCloseTo(logL, 3);
  });

  it('jumps at the breaks: 0.0330 vs 0.0342 at 0.43, 16.0 vs 15.84 at 2, 1.727e6 vs 1.760e6 at 55 ([D] §4a)', () => {
    const below = (m: number) => 10 ** CLASSIC.logL(m * (1 - 1e-12));
    const at = (m: number) => 10 ** CLASSIC.logL(m);
    expect(below(0.43)).toBeCloseTo(0.033, 4);
    expect(at(0.43)).toBeCloseTo(0.0342, 4);
    expect(below(2)).toBeCloseTo(16, 6);
    expect(at(2)).toBeCloseTo(15.84, 2);
    expect(below(55) / 1e6).toBeCloseTo(1.727, 3);
    expect(at(55) / 1e6).toBeCloseTo(1.76, 3);
    // As upper minus lower segment: +0.015 dex at 0.43 (the sheet prints "-0.016"; the two
    // luminosities it quotes give +0.015), -0.004 at 2 and +0.008 at 55.
    expect(Math.log10(at(0.43) / below(0.43))).toBeCloseTo(0.015, 3);
    expect(Math.log10(at(2) / below(2))).toBeCloseTo(-0.004, 3);
    expect(Math.log10(at(55) / below(55))).toBeCloseTo(0.008, 3);
  });

  it('slope() is 2.3, 4, 3.5, 1 and matches a numerical derivative', () => {
    const inside: Array<[number, number]> = [[0.2, 2.3], [1, 4], [10, 3.5], [80, 1]];
    for (const [m, a] of inside) {
      expect(CLASSIC.slope(m)).toBe(a);
      expect(numericalSlope(CLASSIC, m)).toBeCloseTo(a, 6);
    }
  });

  it('outside its 0.1-100 M_sun bound it returns NaN (a project bound, not a published one)', () => {
    for (const m of [0.09, 100.5, NaN]) {
      expect(CLASSIC.logL(m)).toBeNaN();
      expect(CLASSIC.slope(m)).toBeNaN();
    }
  });

  it('over-predicts the Tout ZAMS at 100 M_sun by a factor of about 2.5: 6.51 vs 6.10 ([D] §4a)', () => {
    expect(10 ** (CLASSIC.logL(100) - TOUT_1996.logL(100))).toBeCloseTo(2.5, 1);
  });
});

describe('Tout et al. 1996 ZAMS as a relation (physics-reference.md §5)', () => {
  it('logL is log10 of the ZAMS luminosity at the chosen Z', () => {
    expect(TOUT_1996.logL(1)).toBeCloseTo(Math.log10(toutZamsLuminosity(1, 0.02)), 12);
    expect(toutZamsRelation(0.001).logL(1)).toBeCloseTo(0.1632, 4); // [D] §5
  });

  it('slope() matches a finer numerical derivative, also at Z = 1e-4, and stays finite at the range edges', () => {
    for (const z of [0.02, 0.001, 1e-4]) {
      const relZ = toutZamsRelation(z);
      for (const m of [0.15, 0.5, 1, 3, 10, 40, 90]) {
        expect(Math.abs(relZ.slope(m) - numericalSlope(relZ, m, 1e-5)), `Z = ${z}, M = ${m}`).toBeLessThan(2e-3);
      }
      expect(Number.isFinite(relZ.slope(0.1))).toBe(true);
      expect(Number.isFinite(relZ.slope(100))).toBe(true);
    }
  });

  it('returns NaN outside 0.1-100 M_sun', () => {
    for (const m of [0.099, 100.1, NaN]) {
      expect(TOUT_1996.logL(m)).toBeNaN();
      expect(TOUT_1996.slope(m)).toBeNaN();
    }
  });
});
