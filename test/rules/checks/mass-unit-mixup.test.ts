import { describe, expect, it } from 'vitest';
import { massUnitMixup } from '../../../rules/checks/mass-unit-mixup.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

// Factors from physics-reference.md §9 (IAU 2015 B3 GM ratios, CODATA 2018 G): M_sun = 1047.566 M_Jup
// = 332 946.1 M_Earth = 1.98841e30 kg. logg_sun = 4.438068 (physics-reference.md §1, derived from
// IAU 2015 B3 (GM)_sun and R_sun).
const M_JUP_PER_SUN = 1047.566;
const M_EARTH_PER_SUN = 332_946.1;
const M_SUN_KG = 1.98841e30;
const LOGG_SUN = 4.438068;

const run = (cols: Parameters<typeof makeBatch>[0], text: Parameters<typeof makeBatch>[1] = {}) =>
  runRules([massUnitMixup], [makeBatch(cols, text)]);

describe('mass-unit-mixup', () => {
  it('recognises Jupiter masses from logg and R, and suggests the solar value', () => {
    const { findings } = run({ mass: { values: [M_JUP_PER_SUN] }, logg: { values: [LOGG_SUN] }, radius: { values: [1] } });
    expect(findings).toHaveLength(1);
    expect(findings[0].severity).toBe('error');
    expect(findings[0].values.likelyUnit).toBe('jupiterMass');
    expect(findings[0].suggestion?.value).toBeCloseTo(1, 4);
    expect(findings[0].expected?.value).toBeCloseTo(1, 3);
  });

  it('recognises kg through the mass-luminosity relation alone, and Earth masses from gravity', () => {
    // Eker et al. 2018 Table 4 gives log L = -0.007 at 1 M_sun (physics-reference.md §11), so
    // L = 0.984 L_sun implies about 1 M_sun on the main sequence.
    const { findings } = run(
      { mass: { values: [M_SUN_KG, 0.5 * M_EARTH_PER_SUN] }, luminosity: { values: [0.984, NaN] }, logg: { values: [NaN, LOGG_SUN + Math.log10(0.5) - 2 * Math.log10(0.45)] }, radius: { values: [NaN, 0.45] } },
      { stage: ['G2V', ''] },
    );
    expect(findings.map((f) => f.values.likelyUnit)).toEqual(['kg', 'earthMass']);
    expect(findings[0].suggestion?.value).toBeCloseTo(1, 4);
    expect(findings[1].suggestion?.value).toBeCloseTo(0.5, 4);
  });

  it('judges a mass no star has even without anything to compare it with', () => {
    const { findings } = run({ mass: { values: [M_SUN_KG, 1.2] } });
    expect(findings.map((f) => f.values.likelyUnit)).toEqual(['kg']);
  });

  it('stays silent on white dwarfs, which are small and dense but real', () => {
    // Sirius B: M = 1.018 M_sun, R = 0.008098 R_sun, L = 0.02448 L_sun, logg 8.629
    // (physics-reference.md §6 and §11). A 0.6 M_sun white dwarf of 0.0125 R_sun (Nauenberg, §6).
    const { findings, reports } = run(
      { mass: { values: [1.018, 0.6] }, radius: { values: [0.008098, 0.0125] }, logg: { values: [8.62906, LOGG_SUN + Math.log10(0.6) - 2 * Math.log10(0.0125)] }, luminosity: { values: [0.02448, 0.003] } },
      { stage: ['DA', 'DA'] },
    );
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(2);
  });

  it('stays silent on an ordinary star and on a poor logg within its stated error', () => {
    // Sirius A: M = 2.063, R = 1.713, quoted logg 4.33 against 4.285 from M and R (§6).
    const { findings } = run({ mass: { values: [2.063, 0.5] }, radius: { values: [1.713, 0.5] }, logg: { values: [4.33, 3.5], err: [0.1, 0.5] } });
    expect(findings).toEqual([]);
  });

  it('edge: a plausible-looking value (an M dwarf in Jupiter masses) needs a 1.5 dex miss with one relation', () => {
    // 0.2 M_sun written as 209.5 M_Jup: as solar masses 2.3 dex above what logg and R imply.
    const lg = LOGG_SUN + Math.log10(0.2) - 2 * Math.log10(0.22);
    const { findings } = run({ mass: { values: [0.2 * M_JUP_PER_SUN, 0.2 * 3] }, logg: { values: [lg, lg] }, radius: { values: [0.22, 0.22] } });
    // The first fires (3.02 dex); the second, 3 times too large (0.48 dex), is no unit at all.
    expect(findings.map((f) => [f.row, f.values.likelyUnit])).toEqual([[1, 'jupiterMass']]);
  });

  it('accounts for every row and withholds the flagged cell', () => {
    const batch = makeBatch({ mass: { values: [M_JUP_PER_SUN, NaN, 1] }, logg: { values: [LOGG_SUN, LOGG_SUN, LOGG_SUN] }, radius: { values: [1, 1, 1] } });
    const { reports } = runRules([massUnitMixup], [batch]);
    const skipped = Object.values(reports[0].skipped).reduce((a, b) => a + b, 0);
    expect(reports[0].checked + skipped).toBe(3);
    expect(batch.unusable.mass?.[0]).toBe(1);
    expect(batch.unusable.mass?.[2]).toBe(0);
  });
});
