import { describe, expect, it } from 'vitest';
import { radiusUnitMixup } from '../../../rules/checks/radius-unit-mixup.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

// physics-reference.md §9: R_sun = 695 700 km = 109.076 R_Earth = 9.7312 R_Jup (IAU 2015 B3 nominal
// values). Sirius B: M = 1.018 M_sun, R = 0.008098 R_sun, L = 0.02448 L_sun, Teff from L and R
// 25 370 K, logg 8.62906 (physics-reference.md §6, §11).
const KM_PER_RSUN = 695_700;
const REARTH_PER_RSUN = 109.076;
const RJUP_PER_RSUN = 9.7312;
const LOGG_SUN = 4.438068;
const SIRIUS_B = { mass: 1.018, radius: 0.008098, lum: 0.02448, teff: 25_370, logg: 8.62906 };

const run = (cols: Parameters<typeof makeBatch>[0], text: Parameters<typeof makeBatch>[1] = {}) =>
  runRules([radiusUnitMixup], [makeBatch(cols, text)]);

describe('radius-unit-mixup', () => {
  it('recognises km from L and Teff and suggests the solar value', () => {
    const { findings } = run({ radius: { values: [KM_PER_RSUN] }, luminosity: { values: [1] }, teff: { values: [5772] } });
    expect(findings).toHaveLength(1);
    expect(findings[0].values.likelyUnit).toBe('km');
    expect(findings[0].suggestion?.value).toBeCloseTo(1, 4);
    expect(findings[0].expected?.value).toBeCloseTo(1, 3);
  });

  it('recognises a white dwarf radius written in Earth radii', () => {
    const s = SIRIUS_B;
    const { findings } = run(
      { radius: { values: [s.radius * REARTH_PER_RSUN] }, mass: { values: [s.mass] }, logg: { values: [s.logg] }, luminosity: { values: [s.lum] }, teff: { values: [s.teff] } },
      { stage: ['DA'] },
    );
    expect(findings.map((f) => f.values.likelyUnit)).toEqual(['earthRad']);
    expect(findings[0].suggestion?.value).toBeCloseTo(s.radius, 5);
  });

  it('stays silent on Sirius B: 0.008098 R_sun is a real white-dwarf radius, not km', () => {
    const s = SIRIUS_B;
    const { findings, reports } = run(
      { radius: { values: [s.radius, s.radius] }, mass: { values: [s.mass, NaN] }, logg: { values: [s.logg, NaN] }, luminosity: { values: [s.lum, NaN] }, teff: { values: [s.teff, NaN] } },
      { stage: ['DA', 'DA'] },
    );
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(2);
  });

  it('edge: Jupiter radii (0.99 dex) need two relations; one alone is not enough evidence', () => {
    const one = run({ radius: { values: [RJUP_PER_RSUN] }, luminosity: { values: [1] }, teff: { values: [5772] } });
    expect(one.findings).toEqual([]);
    const two = run({ radius: { values: [RJUP_PER_RSUN] }, luminosity: { values: [1] }, teff: { values: [5772] }, mass: { values: [1] }, logg: { values: [LOGG_SUN] } });
    expect(two.findings.map((f) => f.values.likelyUnit)).toEqual(['jupiterRad']);
  });

  it('reports a column wholly in km once, not once per row', () => {
    const n = 30;
    const r = Array.from({ length: n }, (_, i) => 0.6 + 0.02 * i);
    const { findings, reports } = run({
      radius: { values: r.map((x) => x * KM_PER_RSUN) },
      luminosity: { values: r.map((x) => x * x) },
      teff: { values: r.map(() => 5772) },
    });
    expect(findings).toHaveLength(1);
    expect(findings[0].scope).toBe('column');
    expect(findings[0].values.likelyUnit).toBe('km');
    expect(reports[0].details.rowsInOtherUnit).toBe(n);
  });
});
