import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { REFERENCE, SKIP_SHARED, checkWithReport, hasShared, type Report } from '../helpers/cli.js';

// Real catalogs from ../shared/reference-data (each folder's PROVENANCE.md gives source and quirks).
const ref = (p: string) => join(REFERENCE, p);
const errors = (r: Report) => r.findings.filter((f) => f.severity === 'error');

function accountingHolds(r: Report) {
  for (const inp of r.inputs) expect(inp.records, inp.path).toBe(inp.rows + inp.unparseableRecords);
}

describe.skipIf(!hasShared)('real catalogs (../shared/reference-data)', () => {
  if (!hasShared) it.skip(SKIP_SHARED, () => {});

  it('CARMENES (Cifuentes et al. 2025): no error-level findings on 2634 clean M-dwarf rows', () => {
    const { report, code } = checkWithReport([ref('carmenes-mdwarfs/cif03.full_table.csv'), '--fail-on', 'never']);
    expect(code).toBe(0);
    accountingHolds(report);
    expect(report.inputs[0].rows).toBe(2634);
    // Measured: 0 errors in 2634 rows. Allow at most 0.2 %.
    expect(errors(report).length / 2634).toBeLessThanOrEqual(0.002);
    // White-dwarf companions and non-dwarfs are kept off the main-sequence relation.
    const ml = report.rules.find((r) => r.id === 'mass-luminosity-outlier')!.perInput[0];
    expect(Object.keys(ml.skipped).some((k) => /white dwarf|giant/.test(k))).toBe(true);
  });

  it('PHL exoplanet hosts: error-level findings stay rare, and the real linear value in the log column is caught', () => {
    const { report } = checkWithReport([ref('phl-exoplanet-catalog/phl_exoplanet_catalog.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    expect(report.inputs[0].rows).toBe(5220);
    // Measured: 22 errors in 5220 rows (0.42 %): 17 luminosity-unit-mixup (linear values in the
    // log column, each at least 1000 times more probable as linear), 5 Stefan-Boltzmann. Allow at most 0.5 %.
    expect(errors(report).length / 5220).toBeLessThanOrEqual(0.005);
    // HD 187085: S_LOG_LUM = 2.13, a linear-looking value in a log column; R^2 T^4 gives log L = 0.31
    // (wild-mixed-units PROVENANCE.md names the same archive value).
    const hd = report.findings.find((f) => f.id === 'HD 187085' && f.rule === 'luminosity-unit-mixup');
    expect(hd?.values.likelyUnit).toBe('solLum');
  });

  it('wild-mixed-units: the undeclared log/linear mix in st_lum is reported', () => {
    // PROVENANCE.md: st_lum holds 2326 log10 values and 3290 linear M^3.5 imputations.
    const { report } = checkWithReport([ref('wild-mixed-units/exoplanet_data_tmp.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    const mix = report.findings.filter((f) => f.rule === 'luminosity-unit-mixup');
    expect(mix.length).toBeGreaterThan(1000);
    expect(report.inputs[0].notes.join(' ')).toMatch(/st_lum.*mixed/);
  });

  it('MWDD white dwarfs: no main-sequence findings; only the three impossible rows its PROVENANCE names are errors', () => {
    // PROVENANCE.md: logg 10.627 (Gaia DR2 5064259336725948672), logg 10.000 (2MASS
    // J12101023+3347239) and Dpc = 0.0 (Ton S 56).
    const { report } = checkWithReport([ref('mwdd-white-dwarfs/MWDD-export.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    expect(report.findings.filter((f) => f.rule === 'mass-luminosity-outlier')).toEqual([]);
    expect(errors(report).map((f) => f.id).sort()).toEqual(['2MASS J12101023+3347239', 'Gaia DR2 5064259336725948672', 'Ton S 56']);
  });

  it('red supergiants and archive tables: no error-level findings', () => {
    for (const f of [
      'massive-luminous-stars/RSG_catalog_4_11_24.csv',
      'nasa-exoplanet-archive/PSCompPars_2024-10-15.csv',
      'nasa-exoplanet-archive/legacy_hz_confirmed_planet_hosts_2019.csv',
      'life-nearby-stars/LIFE-StarCat4_dec2024.csv',
      'life-nearby-stars/Mamajek2022-04-16.csv',
    ]) {
      const { report } = checkWithReport([ref(f), '--fail-on', 'never']);
      accountingHolds(report);
      expect(errors(report), f).toEqual([]);
    }
  });
});
