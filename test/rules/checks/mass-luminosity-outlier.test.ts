import { describe, expect, it } from 'vitest';
import { massLuminosityOutlier } from '../../../rules/checks/mass-luminosity-outlier.js';
import { EKER_2018 } from '../../../rules/physics/mass-luminosity.js';
import { toutZamsLuminosity } from '../../../rules/physics/zams.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

const run = (cols: Parameters<typeof makeBatch>[0], text: Parameters<typeof makeBatch>[1] = {}, params: Record<string, string> = {}) =>
  runRules([massLuminosityOutlier], [makeBatch(cols, text)], { params: { 'mass-luminosity-outlier': params } });

describe('mass-luminosity-outlier', () => {
  it('stays silent for a Sun-like star', () => {
    // Eker et al. 2018 Table 4 gives log L = -0.007 at 1 M_sun (physics-reference.md §11).
    const { findings, reports } = run({ mass: { values: [1] }, luminosity: { values: [1] }, logg: { values: [4.44] } });
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(1);
  });

  it('flags a main-sequence star a dex fainter than Eker 2018', () => {
    // Eker 2018 low-mass segment: log L = 5.743 log M - 0.007 = -0.564 at 0.8 M_sun.
    expect(EKER_2018.logL(0.8)).toBeCloseTo(-0.564, 3);
    const { findings } = run({ mass: { values: [0.8] }, luminosity: { values: [0.02] }, logg: { values: [4.6] } });
    expect(findings).toHaveLength(1);
    expect(findings[0].severity).toBe('warning');
    expect(findings[0].values.relation).toBe('eker2018');
    expect(findings[0].values.residualDex as number).toBeCloseTo(Math.log10(0.02) + 0.564, 2);
  });

  it('never judges giants or white dwarfs against a main-sequence relation', () => {
    const { findings, reports } = run(
      { mass: { values: [1, 0.6, 1] }, luminosity: { values: [50, 1e-3, 60] }, logg: { values: [2.5, 8.0, NaN] } },
      { stage: ['', '', 'K0 III'] },
    );
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(0);
    expect(Object.keys(reports[0].skipped).join(' ')).toMatch(/giant/);
    expect(Object.keys(reports[0].skipped).join(' ')).toMatch(/white dwarf/);
  });

  it('judges only the faint side where nothing tells the class', () => {
    // Evolved stars are brighter than the relation, never much fainter (common practice).
    const { findings, reports } = run({ mass: { values: [1, 1] }, luminosity: { values: [30, 0.03] } });
    expect(findings.map((f) => f.row)).toEqual([2]);
    expect(reports[0].details.judgedFaintSideOnly).toBe(2);
  });

  it('uses the Tout 1996 ZAMS as a faint bound beyond the empirical range', () => {
    // Tout et al. 1996 at Z = 0.02: log L(50 M_sun) from the fit (physics-reference.md §5 formula).
    const z = Math.log10(toutZamsLuminosity(50));
    const { findings } = run({
      mass: { values: [50, 50, 50] },
      luminosity: { values: [10 ** (z + 0.3), 10 ** (z - 0.6), 10 ** (z + 1.4)] },
      logg: { values: [4.0, 4.0, 4.0] },
    });
    expect(findings.map((f) => f.row)).toEqual([2, 3]);
    expect(findings.every((f) => f.values.relation === 'tout1996')).toBe(true);
  });

  it('gives no verdict outside the range of every relation', () => {
    const { findings, reports } = run({ mass: { values: [0.05, 150] }, luminosity: { values: [1e-4, 1e6] }, logg: { values: [5, 4] } });
    expect(findings).toEqual([]);
    expect(reports[0].skipped['mass outside the range of the relation']).toBe(2);
  });

  it('counts the measurement errors: a large error bar keeps a star inside', () => {
    // 0.5 dex below at 1 M_sun: with 0.15 dex scatter alone that is 3.3 sigma; with a 0.2 dex
    // error on log L the combined sigma is 0.25 dex and the star is inside 3 sigma.
    const l = 10 ** (-0.007 - 0.5);
    const a = run({ mass: { values: [1] }, luminosity: { values: [l] }, logg: { values: [4.4] } });
    expect(a.findings).toHaveLength(1);
    const e = l * (10 ** 0.2 - 1);
    const b = run({ mass: { values: [1] }, luminosity: { values: [l], err: [e] }, logg: { values: [4.4] } });
    expect(b.findings).toEqual([]);
  });

  it('states how many exceedances chance alone predicts', () => {
    // Two-sided Gaussian tail beyond 3 sigma: 0.0026998 (common practice; erfc(3/sqrt 2)).
    const n = 1000;
    const { reports } = run({ mass: { values: Array(n).fill(1) }, luminosity: { values: Array(n).fill(1) }, logg: { values: Array(n).fill(4.4) } });
    expect(reports[0].details.expectedByChance as number).toBeCloseTo(n * 0.0026998, 2);
    const t = run({ mass: { values: [1] }, luminosity: { values: [1] }, logg: { values: [4.4] } }, {}, { threshold: '2' });
    // Two-sided tail beyond 2 sigma: 0.0455003 (common practice).
    expect(t.reports[0].details.expectedByChance as number).toBeCloseTo(0.0455, 4);
  });

  it('can judge against the classic relation instead', () => {
    // Classic: L = M^4 for 0.43-2 M_sun, so 1.5 M_sun gives 5.06 L_sun (physics-reference.md §4a).
    const { findings } = run({ mass: { values: [1.5] }, luminosity: { values: [5.06] }, logg: { values: [4.3] } }, {}, { relation: 'classic' });
    expect(findings).toEqual([]);
  });
});

describe('mass-luminosity-outlier with [Fe/H]', () => {
  it('does not call a metal-poor star over-luminous when its own ZAMS explains it', () => {
    // Tout et al. 1996: at 1 M_sun the ZAMS gives 1.5863 L_sun at Z = 1e-4 against 0.69772 at
    // Z = 0.02 (physics-reference.md §5, derived from the published coefficients).
    expect(toutZamsLuminosity(1, 1e-4)).toBeCloseTo(1.5863, 3);
    // 0.8 M_sun at log L = -0.01: 0.55 dex above Eker 2018 (3.7 sigma at 0.15 dex scatter), but
    // inside the brightening band above the Z = 1e-4 ZAMS ([Fe/H] = -2.3).
    const l = 10 ** -0.01;
    const solar = run({ mass: { values: [0.8] }, luminosity: { values: [l] }, logg: { values: [4.5] } });
    expect(solar.findings).toHaveLength(1);
    const poor = run({ mass: { values: [0.8] }, luminosity: { values: [l] }, logg: { values: [4.5] }, feh: { values: [-2.3] } });
    expect(poor.findings).toEqual([]);
  });

  it('still flags a star that neither relation explains, naming the closer one', () => {
    const { findings } = run({ mass: { values: [0.8] }, luminosity: { values: [10 ** 1.5] }, logg: { values: [4.5] }, feh: { values: [-2.3] } });
    expect(findings).toHaveLength(1);
    expect(findings[0].values.relation).toBe('tout1996-feh');
  });
});
