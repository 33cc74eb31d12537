import { describe, expect, it } from 'vitest';
import { temperatureUnitMixup } from '../../../rules/checks/temperature-unit-mixup.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

// Teff_sun = 5772 K (IAU 2015 B3), log10 5772 = 3.76133; 1 L_sun and 1 R_sun fit it by
// Stefan-Boltzmann to 3e-6 (physics-reference.md §1).
const LOG_TSUN = Math.log10(5772);

const run = (cols: Parameters<typeof makeBatch>[0]) => runRules([temperatureUnitMixup], [makeBatch(cols)]);

describe('temperature-unit-mixup', () => {
  it('recognises log Teff in a kelvin column from L and R', () => {
    const { findings } = run({ teff: { values: [LOG_TSUN], unit: 'K' }, luminosity: { values: [1] }, radius: { values: [1] } });
    expect(findings).toHaveLength(1);
    expect(findings[0].values.likelyUnit).toBe('log(K)');
    expect(findings[0].suggestion?.value).toBeCloseTo(5772, 0);
    expect(findings[0].suggestion?.unit).toBe('K');
  });

  it('without L and R: 3.3-4.8 is log Teff (physics-reference.md §9), other small values kK', () => {
    const { findings } = run({ teff: { values: [LOG_TSUN, 5.772, 2.9], unit: 'K' } });
    expect(findings.map((f) => f.values.likelyUnit)).toEqual(['log(K)', 'kK', 'kK']);
    expect(findings[1].suggestion?.value).toBeCloseTo(5772, 3);
  });

  it('recognises a kelvin value in a log Teff column', () => {
    const { findings } = run({ teff: { values: [5772], raw: [5772], unit: 'log(K)' }, luminosity: { values: [1] }, radius: { values: [1] } });
    expect(findings.map((f) => f.values.likelyUnit)).toEqual(['K']);
    expect(findings[0].suggestion?.value).toBeCloseTo(LOG_TSUN, 4);
  });

  it('stays silent on real cool and hot stars', () => {
    // WISEP J1217+1626 A, a T dwarf at 575 K (PHL PROVENANCE); WD 2211-495 at 71 530 K (MWDD
    // PROVENANCE); the Sun with its own L and R.
    const { findings, reports } = run({ teff: { values: [575, 71_530, 5772] }, luminosity: { values: [NaN, NaN, 1] }, radius: { values: [NaN, NaN, 1] } });
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(3);
  });

  it('edge: a Teff 0.3 dex off Stefan-Boltzmann (grid Teff, a rapid rotator) is no unit slip', () => {
    const { findings } = run({ teff: { values: [5772 * 2] }, luminosity: { values: [1] }, radius: { values: [1] } });
    expect(findings).toEqual([]);
  });
});
