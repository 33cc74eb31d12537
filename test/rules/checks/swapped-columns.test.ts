import { describe, expect, it } from 'vitest';
import { swappedColumns } from '../../../rules/checks/swapped-columns.js';
import { loggFromMassRadius, luminosityFromRadiusTeff } from '../../../rules/physics/stellar.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

// Rows made consistent with g = GM/R^2 and Stefan-Boltzmann in IAU 2015 B3 nominal units
// (physics-reference.md §1); the Sun: M, R, L = 1, Teff 5772 K, logg 4.438068.
const LOGG_SUN = 4.438068;
// A subgiant of 1.2 M_sun and 2.0 R_sun at 5800 K (values chosen; logg and L derived).
const SUBGIANT = { mass: 1.2, radius: 2.0, teff: 5800, logg: loggFromMassRadius(1.2, 2.0), lum: luminosityFromRadiusTeff(2.0, 5800) };

describe('swapped-columns', () => {
  it('finds mass and radius exchanged and suggests the swap', () => {
    const s = SUBGIANT;
    const batch = makeBatch({ mass: { values: [s.radius] }, radius: { values: [s.mass] }, logg: { values: [s.logg] }, luminosity: { values: [s.lum] }, teff: { values: [s.teff] } });
    const { findings } = runRules([swappedColumns], [batch]);
    expect(findings).toHaveLength(1);
    expect(findings[0].columns).toEqual(['mass', 'radius']);
    expect(findings[0].suggestion?.value).toBeCloseTo(1.2, 6);
    expect(batch.unusable.mass?.[0]).toBe(1);
    expect(batch.unusable.radius?.[0]).toBe(1);
  });

  it('finds Teff and logg exchanged, with or without relations to confirm it', () => {
    const batch = makeBatch({ teff: { values: [LOGG_SUN, LOGG_SUN] }, logg: { values: [5772, 5772] }, mass: { values: [1, NaN] }, radius: { values: [1, NaN] }, luminosity: { values: [1, NaN] } });
    const { findings } = runRules([swappedColumns], [batch]);
    expect(findings.map((f) => f.columns)).toEqual([
      ['teff', 'logg'],
      ['teff', 'logg'],
    ]);
    expect(findings[0].suggestion?.value).toBe(5772);
  });

  it('finds a value exchanged with its own error', () => {
    // The Sun's L = 1.00 +- 0.05 written as 0.05 +- 1.00.
    const batch = makeBatch({ luminosity: { values: [0.05], err: [1.0] }, radius: { values: [1] }, teff: { values: [5772] }, mass: { values: [1] }, logg: { values: [LOGG_SUN] } }, { stage: ['G2V'] });
    const { findings } = runRules([swappedColumns], [batch]);
    expect(findings.map((f) => f.columns[0])).toEqual(['luminosity']);
    expect(findings[0].suggestion?.value).toBeCloseTo(1, 6);
  });

  it('stays silent on consistent rows, where a swap would change nothing (M close to R)', () => {
    const s = SUBGIANT;
    const batch = makeBatch({
      mass: { values: [1, s.mass, 0.3] },
      radius: { values: [1, s.radius, 0.3] },
      logg: { values: [LOGG_SUN, s.logg, 4.95] },
      luminosity: { values: [1, s.lum, NaN] },
      teff: { values: [5772, s.teff, 3400] },
    });
    const { findings, reports } = runRules([swappedColumns], [batch]);
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(3);
  });

  it('edge: Stefan-Boltzmann alone tests R but not M, so it never suggests an M/R swap', () => {
    const s = SUBGIANT;
    const batch = makeBatch({ mass: { values: [s.radius] }, radius: { values: [s.mass] }, luminosity: { values: [s.lum] }, teff: { values: [s.teff] } });
    expect(runRules([swappedColumns], [batch]).findings).toEqual([]);
  });
});
