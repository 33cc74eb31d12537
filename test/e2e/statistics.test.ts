import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { EKER_SCATTER } from '../../rules/physics/relation-choice.js';
import { REFERENCE, SKIP_SHARED, checkWithReport, cli, hasShared, type Report } from '../helpers/cli.js';

const DEMO = 'sample-catalogs/thistlewood-dr1.csv';
const ML = 'mass-luminosity-outlier';
const details = (r: Report) => r.rules.find((x) => x.id === ML)!.perInput[0].details as Record<string, unknown>;
type Segment = { range: [number, number]; stars: number; mode: string; slope: number; offsetAtPivotDex: number; differs: boolean; intrinsicScatterDex: number; scatterDex: number };

describe('--sigma auto and --relation catalog from the command line', () => {
  it('--sigma auto chooses the threshold from the stars judged: 0.5 chance exceedances', () => {
    const { report } = checkWithReport([DEMO, '--rules', ML, '--sigma', 'auto', '--fail-on', 'never']);
    const d = details(report);
    expect(d.thresholdMode).toBe('auto');
    expect(d.expectedByChance).toBeCloseTo(0.5, 4);
    // 2612 stars judged two-sided: k = Q^-1(0.5 / 5224) = 3.73, above the floor of 3.
    expect(d.threshold as number).toBeGreaterThan(3.5);
    expect(d.observed).toBe(report.findings.filter((f) => f.rule === ML).length);
  });

  it('--sigma N keeps a fixed threshold and states the chance count beside the count seen', () => {
    const { report } = checkWithReport([DEMO, '--rules', ML, '--sigma', '3.5', '--fail-on', 'never']);
    const d = details(report);
    expect(d.thresholdMode).toBe('fixed');
    expect(d.threshold).toBe(3.5);
    expect(typeof d.expectedByChance).toBe('number');
    expect(typeof d.chanceProbabilityOfObserved).toBe('number');
    expect((d.residualTails as { gaussianFraction: number }).gaussianFraction).toBeCloseTo(0.0027, 4);
  });

  it('--relation catalog fits the demo (made with Eker 2018) and finds no difference worth a note', () => {
    const { report } = checkWithReport([DEMO, '--rules', ML, '--relation', 'catalog', '--fail-on', 'never']);
    const fit = details(report).catalogFit as { starsFitted: number; segments: Segment[] };
    expect(fit.starsFitted).toBeGreaterThan(2000);
    for (const s of fit.segments) {
      expect(s.mode).toBe('line');
      expect(s.differs, `${s.range}`).toBe(false);
    }
    expect(report.findings.filter((f) => f.scope === 'column')).toEqual([]);
  });

  it('--relation catalog cannot read standard input twice: one line, exit 2', () => {
    const r = cli(['check', '-', '--relation', 'catalog'], 'mass,lum\n1,1\n');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/standard input can be read only once/);
    expect(r.stderr).not.toMatch(/at .*\.ts:/);
  });

  it('an unknown relation or sigma is a usage error', () => {
    expect(cli(['check', DEMO, '--relation', 'fancy']).code).toBe(2);
    expect(cli(['check', DEMO, '--sigma', 'many']).code).toBe(2);
  });
});

describe.skipIf(!hasShared)('the catalog fit on real catalogs (../shared/reference-data)', () => {
  if (!hasShared) it.skip(SKIP_SHARED, () => {});

  it('CARMENES: the fit differs from Eker 2018 in both M-dwarf segments, and the report says so', () => {
    const { report } = checkWithReport([join(REFERENCE, 'carmenes-mdwarfs/cif03.full_table.csv'), '--rules', ML, '--relation', 'catalog', '--fail-on', 'never']);
    const fit = details(report).catalogFit as { segments: Segment[] };
    // The same main-sequence stars test/e2e/scatter-calibration.test.ts counts: 856 below 0.45 M_sun, 654 in 0.45-0.72.
    expect(fit.segments[0].stars).toBe(856);
    expect(fit.segments[1].stars).toBe(654);
    // Measured: slope 2.35 +- 0.02 (Eker 2.028) below 0.45 M_sun and 3.05 +- 0.03 (Eker 4.572) in 0.45-0.72.
    expect(fit.segments[0].differs).toBe(true);
    expect(fit.segments[1].differs).toBe(true);
    expect(fit.segments[1].slope).toBeLessThan(4);
    // Around its own fit the catalog scatters less than around Eker 2018 (our adopted scatter).
    expect(fit.segments[0].intrinsicScatterDex).toBeLessThanOrEqual(EKER_SCATTER[0].scatter);
    const note = report.findings.find((f) => f.rule === ML && f.scope === 'column' && f.severity === 'note');
    expect(note?.message).toMatch(/0\.179-0\.45 M_sun/);
  });

  it('PHL: hosts 0.03-0.09 dex brighter than Eker 2018 in every populated segment', () => {
    const { report } = checkWithReport([join(REFERENCE, 'phl-exoplanet-catalog/phl_exoplanet_catalog.csv'), '--rules', ML, '--relation', 'catalog', '--fail-on', 'never']);
    const fit = details(report).catalogFit as { segments: Segment[] };
    const fitted = fit.segments.filter((s) => s.mode !== 'published');
    expect(fitted.length).toBe(4);
    // Measured offsets at the pivot masses: +0.092, +0.084, +0.054, +0.028 dex.
    for (const s of fitted) {
      expect(s.offsetAtPivotDex).toBeGreaterThan(0.01);
      expect(s.offsetAtPivotDex).toBeLessThan(0.15);
    }
  });
});
