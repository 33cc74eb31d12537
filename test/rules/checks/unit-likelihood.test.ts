import { describe, expect, it } from 'vitest';
import { decimalShift } from '../../../rules/checks/decimal-shift.js';
import { luminosityUnitMixup } from '../../../rules/checks/luminosity-unit-mixup.js';
import { massUnitMixup } from '../../../rules/checks/mass-unit-mixup.js';
import { EKER_2018 } from '../../../rules/physics/mass-luminosity.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

// L_sun = 3.828e26 W (IAU 2015 Resolution B3); logg_sun = 4.438 (B3 nominal GM and R, physics-reference.md §1).
const LSUN_W = 3.828e26;
const LOGG_SUN = 4.438068;

describe('unit mix-ups fire on a likelihood ratio, and say how large it is', () => {
  it('watts: the ratio is the Gaussian one, worked by hand', () => {
    // R = 1 R_sun, Teff = 5772 K: Stefan-Boltzmann gives log L = 0 (to 1e-6) with 0.15 dex tolerance.
    // As solLum the cell is log L = 26.583, 26.583 dex off; as W it is log L = 0.
    // log10 ratio = (26.583^2 - 0^2) / (2 x 0.15^2 x ln 10) = 6819.9.
    const { findings } = runRules([luminosityUnitMixup], [makeBatch({ luminosity: { values: [LSUN_W] }, radius: { values: [1] }, teff: { values: [5772] } })]);
    expect(findings).toHaveLength(1);
    const d = Math.log10(LSUN_W);
    expect(findings[0].values.likelihoodRatioLog10 as number).toBeCloseTo((d * d) / (2 * 0.15 * 0.15 * Math.LN10), 0);
    expect(findings[0].message).toMatch(/about 10\^6819 times more probable than solLum/);
    // No other reading is one a star can have (erg/s gives 1e-7 L_sun), so there is no runner-up.
    expect(findings[0].values.runnerUpUnit).toBeNull();
  });

  it('a log L in a linear column fires above the ratio threshold and stays silent below it', () => {
    // 1 M_sun main-sequence star (logg 4.4): Eker 2018 expects log L = -0.007 (Table 4), taken
    // with 0.5 dex tolerance where R and Teff are unknown.
    const row = (v: number, params: Record<string, string> = {}) =>
      runRules([luminosityUnitMixup], [makeBatch({ luminosity: { values: [v] }, mass: { values: [1] }, logg: { values: [4.4] } })], { params: { 'luminosity-unit-mixup': params } });
    // 0.005 as solLum: log L = -2.301, 2.294 dex off; as log(solLum): -0.005... no, log L = 0.005, 0.012 dex off.
    // log10 ratio = (2.294^2 - 0.012^2) / (2 x 0.25 x ln 10) = 4.571: about 37 000 times.
    const fired = row(0.005);
    expect(fired.findings).toHaveLength(1);
    expect(fired.findings[0].values.likelyUnit).toBe('log(solLum)');
    const expected = ((-2.301 + 0.007) ** 2 - (0.005 + 0.007) ** 2) / (2 * 0.25 * Math.LN10);
    expect(fired.findings[0].values.likelihoodRatioLog10 as number).toBeCloseTo(expected, 2);
    expect(fired.findings[0].message).toMatch(/37000 times more probable/);
    // Demanding 10^5 silences it.
    expect(row(0.005, { minLikelihoodRatio: '1e5' }).findings).toEqual([]);
    // 0.05: log L = -1.301 as declared, 1.294 dex off; as a log, 0.057 dex off: (1.294^2 - 0.057^2) / 1.1513
    // = 1.45, only 28 times: below 1000, so the rule stays silent although the declared value is 2.6 sigma off.
    expect(row(0.05).findings).toEqual([]);
  });
});

describe('unit mix-ups leave slipped decimal points to decimal-shift', () => {
  it('0.1 M_sun for a 1.0 M_sun dwarf: x 10 fits better than log M = 0.1 (1.26 M_sun), so decimal-shift reports it', () => {
    // M = 1, R = 1: logg = 4.438; L on Eker 2018 at 1 M_sun (log L = -0.007). Read as log M the
    // cell is 0.1 dex off g R^2 / G (1 sigma) and 1.1 sigma off the inverted relation; moved one
    // place it fits exactly.
    const batch = makeBatch({ mass: { values: [0.1], unit: 'solMass' }, radius: { values: [1], unit: 'solRad' }, logg: { values: [LOGG_SUN] }, luminosity: { values: [10 ** EKER_2018.logL(1)] } });
    const { findings, reports } = runRules([massUnitMixup, decimalShift], [batch]);
    expect(findings.map((f) => f.rule)).toEqual(['decimal-shift']);
    expect(findings[0].values.shiftDex).toBe(1);
    expect(reports.find((x) => x.id === 'mass-unit-mixup')!.details.rowsLeftToDecimalShift).toBe(1);
  });

  it('a Jupiter-mass value (1047.6 times, within 0.02 dex of 1000) stays with the unit rule', () => {
    // 1 M_sun written in M_Jup: 1047.566 (IAU 2015 B3 GM ratio, physics-reference.md §9).
    const batch = makeBatch({ mass: { values: [1047.566], unit: 'solMass' }, radius: { values: [1], unit: 'solRad' }, logg: { values: [LOGG_SUN] } });
    const { findings } = runRules([massUnitMixup, decimalShift], [batch]);
    expect(findings.map((f) => [f.rule, f.values.likelyUnit])).toEqual([['mass-unit-mixup', 'jupiterMass']]);
  });
});

describe('unit mix-ups state their chance rate and tails', () => {
  it('consistent rows: a chance rate that is small but not nil (the log reading of 0.4-1.7 L_sun is 1 dex away), no heavy tails', () => {
    const n = 200;
    const r = Array.from({ length: n }, (_, i) => 0.6 + i * 0.005);
    const batch = makeBatch({ luminosity: { values: r.map((x) => x * x) }, radius: { values: r }, teff: { values: r.map(() => 5772) } });
    const { findings, reports } = runRules([luminosityUnitMixup], [batch]);
    expect(findings).toEqual([]);
    const d = reports[0].details;
    // Per row about Q(ln 1000 / delta + delta / 2) with delta = 1 dex / 0.15 dex = 6.7: Q(4.4) = 5e-6.
    expect(d.expectedByChance as number).toBeGreaterThan(0);
    expect(d.expectedByChance as number).toBeLessThan(0.01);
    expect((d.residualTails as { heavyTailed: boolean }).heavyTailed).toBe(false);
    expect(d.minLikelihoodRatio).toBe(1000);
  });
});
