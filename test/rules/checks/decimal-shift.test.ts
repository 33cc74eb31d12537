import { describe, expect, it } from 'vitest';
import { decimalShift } from '../../../rules/checks/decimal-shift.js';
import { loggFromMassRadius, teffFromLuminosityRadius } from '../../../rules/physics/stellar.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

// A main-sequence star that satisfies every relation: M = 20 M_sun, log L = 4.832 from Eker et al.
// 2018 (physics-reference.md §11), R = 6 R_sun chosen; logg from g = GM/R^2 and Teff from
// Stefan-Boltzmann with the IAU 2015 B3 nominal values. The Sun: M, R, L = 1, Teff 5772 K, logg
// 4.438068 (physics-reference.md §1).
const O_STAR = (() => {
  const mass = 20;
  const lum = Math.pow(10, 4.832);
  const radius = 6;
  return { mass, lum, radius, teff: teffFromLuminosityRadius(lum, radius), logg: loggFromMassRadius(mass, radius) };
})();
const SUN = { mass: 1, lum: 1, radius: 1, teff: 5772, logg: 4.438068 };

type Star = typeof SUN;
function rows(stars: Star[], stage = 'MS') {
  return makeBatch(
    {
      mass: { values: stars.map((s) => s.mass) },
      luminosity: { values: stars.map((s) => s.lum) },
      radius: { values: stars.map((s) => s.radius) },
      teff: { values: stars.map((s) => s.teff) },
      logg: { values: stars.map((s) => s.logg) },
    },
    { stage: stars.map(() => stage) },
  );
}

describe('decimal-shift', () => {
  it('finds a mass ten times too small and suggests the shifted value', () => {
    const { findings } = runRules([decimalShift], [rows([{ ...O_STAR, mass: 2.0 }])]);
    expect(findings).toHaveLength(1);
    expect(findings[0].severity).toBe('warning');
    expect(findings[0].values.shiftDex).toBe(1);
    expect(findings[0].suggestion?.value).toBeCloseTo(20, 6);
    expect(findings[0].expected?.value).toBeCloseTo(20, -1);
  });

  it('finds a luminosity ten times too large on the Sun', () => {
    const { findings } = runRules([decimalShift], [rows([{ ...SUN, lum: 10 }])]);
    expect(findings.map((f) => [f.columns[0], f.values.shiftDex])).toEqual([['luminosity', -1]]);
    expect(findings[0].suggestion?.value).toBeCloseTo(1, 6);
  });

  it('stays silent within the normal scatter and where no power of ten mends the row', () => {
    // 0.18 dex and 0.5 dex off Stefan-Boltzmann: grid Teff or a rapid rotator (physics-reference.md T8).
    const { findings, reports } = runRules([decimalShift], [rows([SUN, { ...SUN, lum: 1.5 }, { ...SUN, lum: Math.pow(10, 0.5) }, O_STAR])]);
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(4);
  });

  it('edge: leaves Jupiter radii (9.73, not 10) to radius-unit-mixup', () => {
    // R_sun = 9.7312 R_Jup (physics-reference.md §9): ten times too large fits, the unit fits better.
    const { findings, reports } = runRules([decimalShift], [rows([{ ...SUN, radius: 9.7312 }])]);
    expect(findings).toEqual([]);
    expect(reports[0].details.rowsLeftToUnitRules).toBe(1);
  });

  it('edge: with Stefan-Boltzmann alone a radius off by 10 cannot be told from L off by 100: silent', () => {
    const batch = makeBatch({ luminosity: { values: [1] }, radius: { values: [10] }, teff: { values: [5772] } });
    const { findings, reports } = runRules([decimalShift], [batch]);
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(1);
  });

  it('accounts for rows it cannot judge', () => {
    const batch = makeBatch({ mass: { values: [1, NaN] }, luminosity: { values: [NaN, 1] } });
    const { reports } = runRules([decimalShift], [batch]);
    expect(reports[0].checked).toBe(0);
    expect(Object.values(reports[0].skipped).reduce((a, b) => a + b, 0)).toBe(2);
  });
});
