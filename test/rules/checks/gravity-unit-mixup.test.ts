import { describe, expect, it } from 'vitest';
import { gravityUnitMixup } from '../../../rules/checks/gravity-unit-mixup.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

// logg_sun = 4.438068 in cgs, g_sun = 274.200 m s^-2 = 27 420 cm s^-2 (physics-reference.md §1,
// derived from IAU 2015 B3); SI is 2 dex lower (§9).
const LOGG_SUN = 4.438068;
const G_SUN_CGS = 27_420.0;

const run = (cols: Parameters<typeof makeBatch>[0]) => runRules([gravityUnitMixup], [makeBatch(cols)]);

describe('gravity-unit-mixup', () => {
  it('recognises log g in SI when M and R say otherwise', () => {
    // L = 1 L_sun and Teff = 5772 K vouch for R = 1 R_sun by Stefan-Boltzmann (physics-reference.md §1).
    const { findings } = run({ logg: { values: [LOGG_SUN - 2], unit: 'log(cm.s-2)' }, mass: { values: [1] }, radius: { values: [1] }, luminosity: { values: [1] }, teff: { values: [5772] } });
    expect(findings).toHaveLength(1);
    expect(findings[0].values.likelyUnit).toBe('log(m.s-2)');
    expect(findings[0].suggestion?.value).toBeCloseTo(LOGG_SUN, 4);
    expect(findings[0].expected?.value).toBeCloseTo(LOGG_SUN, 4);
  });

  it('recognises a linear g in a log column, even without M and R', () => {
    const { findings } = run({ logg: { values: [G_SUN_CGS] } });
    expect(findings.map((f) => f.values.likelyUnit)).toEqual(['cm.s-2']);
    expect(findings[0].suggestion?.value).toBeCloseTo(LOGG_SUN, 3);
  });

  it('stays silent on quoted logg that differs from M/R^2 as real ones do, and on an impossible logg alone', () => {
    // Sirius A: quoted 4.33 against 4.285 from M = 2.063 and R = 1.713 (physics-reference.md §6, T9).
    // MWDD Gaia DR2 5064259336725948672 has logg 10.627 (MWDD PROVENANCE): impossible, but no
    // linear g either; value-out-of-range reports it.
    const { findings } = run({ logg: { values: [4.33, 10.627] }, mass: { values: [2.063, NaN] }, radius: { values: [1.713, NaN] } });
    expect(findings).toEqual([]);
  });

  it('edge: in a batch whose logg scatters by a dex around M/R^2 (grid fits), 2 dex low is no evidence of SI', () => {
    // 40 rows scattered +-1 dex as a 0.5-dex grid does (CARMENES PROVENANCE: up to 2.8 dex), then
    // one row exactly 2 dex low. In a clean batch the same row is SI.
    const n = 40;
    const noisy = Array.from({ length: n }, (_, i) => LOGG_SUN + (i % 5) * 0.5 - 1);
    const ones = (g: number[], v: number) => [...g.map(() => v), v];
    const mk = (g: number[]) =>
      makeBatch({
        logg: { values: [...g, LOGG_SUN - 2], err: ones(g, 0.25) },
        mass: { values: ones(g, 1) },
        radius: { values: ones(g, 1) },
        luminosity: { values: ones(g, 1) },
        teff: { values: ones(g, 5772) },
      });
    expect(runRules([gravityUnitMixup], [mk(noisy)]).findings).toEqual([]);
    const clean = runRules([gravityUnitMixup], [mk(noisy.map(() => LOGG_SUN))]);
    expect(clean.findings.map((f) => f.row)).toEqual([n + 1]);
  });

  it('edge: where a log radius would explain the row as well, it stays silent unless L and Teff vouch for R', () => {
    // M = 1, R written 1.05: as R_sun, logg 4.396 (a dwarf, so 2.396 looks SI); as log R (11.2 R_sun)
    // it is a giant with logg 2.338, within the tolerance of the written 2.396.
    const lg = LOGG_SUN - 2 * Math.log10(1.05) - 2;
    const alone = run({ logg: { values: [lg] }, mass: { values: [1] }, radius: { values: [1.05] } });
    expect(alone.findings).toEqual([]);
    expect(alone.reports[0].details.rowsAmbiguous).toBe(1);
    const vouched = run({ logg: { values: [lg] }, mass: { values: [1] }, radius: { values: [1.05] }, luminosity: { values: [1.05 * 1.05] }, teff: { values: [5772] } });
    expect(vouched.findings.map((f) => f.values.likelyUnit)).toEqual(['log(m.s-2)']);
  });
});
