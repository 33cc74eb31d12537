import { describe, expect, it } from 'vitest';
import { massLuminosityOutlier } from '../../../rules/checks/mass-luminosity-outlier.js';
import { EKER_2018 } from '../../../rules/physics/mass-luminosity.js';
import { toutZamsLuminosity } from '../../../rules/physics/zams.js';
import { PrepassRun, mergePrepassStates } from '../../../rules/engine/prepass.js';
import type { Quantity } from '../../../rules/engine/quantities.js';
import { InputRun, selectRules } from '../../../rules/engine/runner.js';
import type { Batch, Finding } from '../../../rules/engine/types.js';
import { makeBatch, runRules } from '../../helpers/batch.js';
import { rng } from '../../helpers/rng.js';

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

// ---- Statistics: the catalog's own relation, thresholds that respect N, tails, error sides ----

/** Standard normal deviates from a seeded generator (Box-Muller, common practice). */
function gauss(seed: number): () => number {
  const r = rng(seed);
  return () => Math.sqrt(-2 * Math.log(1 - r())) * Math.cos(2 * Math.PI * r());
}

/** Main-sequence stars (logg 4.4) of 0.75-1.0 M_sun on Eker 2018 + offset, Gaussian scatter `sd` dex, no stated errors. */
function noiseCatalog(n: number, seed: number, sd = 0.15, offset = 0) {
  const g = gauss(seed);
  const u = rng(seed + 1000);
  const mass: number[] = [];
  const lum: number[] = [];
  for (let i = 0; i < n; i++) {
    const m = 0.75 + 0.25 * u();
    mass.push(m);
    lum.push(10 ** (EKER_2018.logL(m) + offset + sd * g()));
  }
  return makeBatch({ mass: { values: mass }, luminosity: { values: lum }, logg: { values: mass.map(() => 4.4) } });
}

/** Both passes, as the CLI runs them for `--relation catalog`. */
function twoPass(batches: Batch[], params: Record<string, string>) {
  const selection = { params: { 'mass-luminosity-outlier': params } };
  const rules = selectRules([massLuminosityOutlier], selection);
  const bound = new Map<Quantity, { column: string; unit: string }>();
  for (const b of batches) for (const [q, c] of Object.entries(b.quantities)) bound.set(q as Quantity, { column: c!.column, unit: c!.unit });
  const pre = new PrepassRun(rules, selection, bound);
  expect(pre.idle).toBe(params.relation !== 'catalog');
  for (const b of batches) pre.observe(b);
  const states = mergePrepassStates(rules, [pre.states()]);
  const findings: Finding[] = [];
  const run = new InputRun(rules, selection, bound, { push: (f) => findings.push(f) }, undefined, states);
  for (const b of batches) run.processBatch(b);
  return { findings, reports: run.finish() };
}

describe('mass-luminosity-outlier: the catalog`s own relation (--relation catalog)', () => {
  it('judges against the catalog`s fit, records it beside Eker 2018, and notes the difference', () => {
    // A catalog 0.4 dex brighter than Eker 2018 (a metal-poor sample, say) with 0.05 dex scatter,
    // plus one star 1 dex below its own sequence.
    const batch = noiseCatalog(600, 7, 0.05, 0.4);
    const l = batch.quantities.luminosity!;
    l.value[17] = 10 ** (EKER_2018.logL(batch.quantities.mass!.value[17]) + 0.4 - 1);
    l.log![17] = Math.log10(l.value[17]);
    const published = run({ mass: { values: [...batch.quantities.mass!.value] }, luminosity: { values: [...l.value] }, logg: { values: Array(600).fill(4.4) } });
    // Against Eker 2018 (0.15 dex scatter there) most stars of this sample sit 2.7 sigma high; 3 sigma catches many.
    expect(published.findings.length).toBeGreaterThan(100);
    const { findings, reports } = twoPass([batch], { relation: 'catalog' });
    const rows = findings.filter((f) => f.scope === 'row');
    // The planted star, and at most a chance star or two (600 x 2 Q(3) = 1.6 expected).
    expect(rows.map((f) => f.row)).toContain(18);
    expect(rows.length).toBeLessThanOrEqual(4);
    expect(rows[0].values.relation).toBe('catalog');
    const fit = (reports[0].details.catalogFit as { segments: Record<string, unknown>[] }).segments[2];
    expect(fit.mode).toBe('line');
    expect(fit.offsetAtPivotDex as number).toBeCloseTo(0.4, 1);
    expect(fit.publishedSlope).toBe(5.743);
    expect(fit.differs).toBe(true);
    const note = findings.find((f) => f.scope === 'column')!;
    expect(note.severity).toBe('note');
    expect(note.message).toMatch(/differs from Eker et al\. 2018 by more than 3 sigma/);
    expect(note.message).toMatch(/0\.72-1\.05 M_sun/);
  });

  it('gives no note where the catalog follows the published relation', () => {
    const { findings, reports } = twoPass([noiseCatalog(600, 8, 0.1)], { relation: 'catalog' });
    expect(findings.filter((f) => f.scope === 'column')).toEqual([]);
    const fit = (reports[0].details.catalogFit as { segments: Record<string, unknown>[] }).segments[2];
    expect(fit.differs).toBe(false);
    expect(Math.abs(fit.slope as number) - 5.743).toBeLessThan(0.5);
  });

  it('without a first pass (a caller that skipped it) judges as the default does and says so', () => {
    const { reports } = runRules([massLuminosityOutlier], [noiseCatalog(50, 9)], { params: { 'mass-luminosity-outlier': { relation: 'catalog' } } });
    expect((reports[0].details.catalogFit as { note: string }).note).toMatch(/no first pass/);
    expect(reports[0].details.judgedBy).toEqual({ eker2018: 50 });
  });
});

describe('mass-luminosity-outlier: thresholds that respect the number of stars', () => {
  it('--sigma auto gives 0.5 chance exceedances on pure Gaussian noise, as stated', () => {
    // 100 catalogs of 2000 stars whose residuals are exactly N(0, 1) in sigma: k = Q^-1(0.5 / 4000) = 3.66.
    let seen = 0;
    let k = NaN;
    for (let rep = 0; rep < 100; rep++) {
      const { findings, reports } = runRules([massLuminosityOutlier], [noiseCatalog(2000, 100 + rep)], { params: { 'mass-luminosity-outlier': { thresholdMode: 'auto' } } });
      const d = reports[0].details;
      expect(d.expectedByChance).toBeCloseTo(0.5, 4);
      k = d.threshold as number;
      expect(d.observed).toBe(findings.length);
      seen += findings.length;
    }
    expect(k).toBeCloseTo(3.6623, 3);
    // Mean 0.5 per catalog; the mean of 100 Poisson(0.5) counts has sd 0.07.
    expect(seen / 100).toBeGreaterThan(0.3);
    expect(seen / 100).toBeLessThan(0.75);
  });

  it('with a fixed threshold states the chance count and the count seen, which agree on noise', () => {
    let seen = 0;
    for (let rep = 0; rep < 20; rep++) {
      const { reports } = runRules([massLuminosityOutlier], [noiseCatalog(2000, 300 + rep)]);
      const d = reports[0].details;
      // 2000 x 2 Q(3) = 5.4 (two-sided).
      expect(d.expectedByChance as number).toBeCloseTo(5.3996, 3);
      seen += d.observed as number;
    }
    // Mean of 20 Poisson(5.4) counts: sd 0.52.
    expect(seen / 20).toBeGreaterThan(3.8);
    expect(seen / 20).toBeLessThan(7);
  });

  it('auto mode lists its stars after the input, with the band at the threshold it chose', () => {
    const batch = noiseCatalog(2000, 500);
    batch.quantities.luminosity!.value[5] /= 100;
    batch.quantities.luminosity!.log![5] -= 2;
    const { findings, reports } = runRules([massLuminosityOutlier], [batch], { params: { 'mass-luminosity-outlier': { thresholdMode: 'auto' } } });
    expect(findings.some((f) => f.row === 6)).toBe(true);
    const f = findings.find((x) => x.row === 6)!;
    const k = reports[0].details.threshold as number;
    const sigma = f.values.sigmaDex as number;
    const logL = Math.log10(f.expected!.value!);
    expect(Math.log10(f.expected!.min!)).toBeCloseTo(logL - k * sigma, 2);
    expect(reports[0].details.thresholdMode).toBe('auto');
  });

  it('reports heavy tails: Gaussian residuals pass the check, 3 % gross outliers fail it', () => {
    const clean = runRules([massLuminosityOutlier], [noiseCatalog(3000, 600)]).reports[0].details.residualTails as Record<string, unknown>;
    expect(clean.heavyTailed).toBe(false);
    expect(clean.robustSigmaOfZ as number).toBeCloseTo(1, 1);
    const batch = noiseCatalog(3000, 601);
    const l = batch.quantities.luminosity!;
    for (let i = 0; i < 3000; i += 33) {
      l.value[i] *= 10;
      l.log![i] += 1;
    }
    const tails = runRules([massLuminosityOutlier], [batch]).reports[0].details.residualTails as Record<string, unknown>;
    expect(tails.heavyTailed).toBe(true);
    expect(tails.fractionBeyondThreeRobustSigma as number).toBeGreaterThan(0.025);
    expect(tails.gaussianFraction).toBeCloseTo(0.0027, 4);
  });
});

describe('mass-luminosity-outlier: errors on the side facing the relation', () => {
  it('a star below the relation is judged with its upper L error, one above with its lower', () => {
    // 0.6 dex below Eker at 1 M_sun (-0.007, Table 4): 4 sigma on the 0.15 dex scatter alone.
    const below = 10 ** (-0.007 - 0.6);
    // An upper error of +0.3 dex (towards the relation) keeps it inside 3 sigma; the same error
    // on the far side does not.
    const up = below * (10 ** 0.3 - 1);
    const small = below * 0.01;
    const near = run({ mass: { values: [1] }, luminosity: { values: [below], errLo: [small], errHi: [up] }, logg: { values: [4.4] } });
    expect(near.findings).toEqual([]);
    const far = run({ mass: { values: [1] }, luminosity: { values: [below], errLo: [below * 0.5], errHi: [small] }, logg: { values: [4.4] } });
    expect(far.findings).toHaveLength(1);
  });
});

describe('mass-luminosity-outlier: metal-rich stars are not called faint', () => {
  it('a 1 M_sun star below Eker 2018 but on the ZAMS of its own [Fe/H] (Tout et al. 1996) stays silent', () => {
    // [Fe/H] = +0.2 gives Z = 0.0317, clamped to the fit's 0.03; the Tout ZAMS there is fainter than at Z = 0.02.
    const zams = Math.log10(toutZamsLuminosity(1, 0.03));
    expect(zams).toBeLessThan(Math.log10(toutZamsLuminosity(1, 0.02)));
    // 0.47 dex below Eker's -0.007 (3.1 sigma at 0.15 dex), and within 3 x 0.1 dex below that ZAMS.
    const l = -0.007 - 0.47;
    expect(zams - l).toBeGreaterThan(0);
    expect(zams - l).toBeLessThan(0.3);
    const solar = run({ mass: { values: [1] }, luminosity: { values: [10 ** l] }, logg: { values: [4.4] } });
    expect(solar.findings).toHaveLength(1);
    const rich = run({ mass: { values: [1] }, luminosity: { values: [10 ** l] }, logg: { values: [4.4] }, feh: { values: [0.2] } });
    expect(rich.findings).toEqual([]);
    // A metal-poor star that faint is not explained: its ZAMS is brighter still.
    const poor = run({ mass: { values: [1] }, luminosity: { values: [10 ** l] }, logg: { values: [4.4] }, feh: { values: [-1] } });
    expect(poor.findings).toHaveLength(1);
  });
});
