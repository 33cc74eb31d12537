import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { REFERENCE, SKIP_SHARED, checkWithReport, hasShared, type Report } from '../helpers/cli.js';

// Copying-slip rules on real catalogs from ../shared/reference-data (each folder's
// PROVENANCE.md gives the source). These tables have no planted slips, so every finding of these
// rules on them is a false alarm unless a PROVENANCE file names the row.
const SLIP_RULES = ['swapped-columns', 'gravity-unit-mixup', 'temperature-unit-mixup', 'mass-unit-mixup', 'radius-unit-mixup', 'decimal-shift'];
const ref = (p: string) => join(REFERENCE, p);
const slipFindings = (r: Report, severity?: string) => r.findings.filter((f) => SLIP_RULES.includes(f.rule) && (!severity || f.severity === severity));

function accountingHolds(r: Report) {
  for (const rule of r.rules.filter((x) => SLIP_RULES.includes(x.id))) {
    const pi = rule.perInput[0];
    const skipped = Object.values(pi.skipped).reduce((a, b) => a + b, 0);
    expect(pi.checked + skipped, rule.id).toBe(r.inputs[0].rows);
  }
}

describe.skipIf(!hasShared)('copying-slip rules on real catalogs (../shared/reference-data)', () => {
  if (!hasShared) it.skip(SKIP_SHARED, () => {});

  it('CARMENES cif03 (2634 M dwarfs, white-dwarf companions, grid logg): no slip findings', () => {
    const { report } = checkWithReport([ref('carmenes-mdwarfs/cif03.full_table.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    expect(report.inputs[0].rows).toBe(2634);
    // Measured: 0 errors and 0 warnings in 2634 rows. The grid logg (0.5 dex steps, up to 2.8 dex
    // from M/R^2) gives a batch logg scatter of about 0.69 dex, so no 2-dex gap reads as SI.
    expect(slipFindings(report, 'error').length / 2634).toBeLessThanOrEqual(0.001);
    const gravity = report.rules.find((r) => r.id === 'gravity-unit-mixup')!.perInput[0];
    expect(gravity.details.batchLoggScatterDexMax as number).toBeGreaterThan(0.3);
    // No mass or radius unit finding on the white-dwarf companions (or anywhere).
    expect(report.findings.filter((f) => f.rule === 'mass-unit-mixup' || f.rule === 'radius-unit-mixup')).toEqual([]);
  });

  it('PHL exoplanet hosts (5220 rows, white-dwarf, subdwarf and giant hosts): no slip findings', () => {
    const { report } = checkWithReport([ref('phl-exoplanet-catalog/phl_exoplanet_catalog.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    // Measured: 0 errors and 0 warnings in 5220 rows.
    expect(slipFindings(report, 'error').length / 5220).toBeLessThanOrEqual(0.001);
    expect(slipFindings(report).length / 5220).toBeLessThanOrEqual(0.002);
    // WD 1856+534 (M 0.52, R 0.01, logg 7.92; PHL PROVENANCE) is small and dense, and real.
    expect(slipFindings(report).filter((f) => f.id === 'WD 1856+534')).toEqual([]);
  });

  it('NASA PSCompPars (5766 rows): no slip findings', () => {
    const { report } = checkWithReport([ref('nasa-exoplanet-archive/PSCompPars_2024-10-15.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    // Measured: 0 errors and 0 warnings in 5766 rows.
    expect(slipFindings(report, 'error').length / 5766).toBeLessThanOrEqual(0.001);
    expect(slipFindings(report).length / 5766).toBeLessThanOrEqual(0.002);
  });

  it('MWDD white dwarfs (17 057 rows, logg about 8): no unit findings, even on the impossible logg 10.6', () => {
    const { report } = checkWithReport([ref('mwdd-white-dwarfs/MWDD-export.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    // Measured: 0 findings. Mass and radius are not in the file, so those rules do not run; logg
    // 10.627 (PROVENANCE) is impossible but no linear g, and is left to value-out-of-range.
    expect(slipFindings(report)).toEqual([]);
    expect(report.rules.find((r) => r.id === 'mass-unit-mixup')!.perInput[0].status).toBe('skipped');
  });

  it('wild-mixed-units (a processed table with imputed luminosities): the slip rules do not flood it', () => {
    const { report } = checkWithReport([ref('wild-mixed-units/exoplanet_data_tmp.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    // Measured: 1 error (radius-unit-mixup, a brown dwarf whose L is an imputation) and 12
    // decimal-shift warnings on rows whose st_lum is an M^3.5 imputation (PROVENANCE), in 5839 rows.
    expect(slipFindings(report, 'error').length / 5839).toBeLessThanOrEqual(0.001);
    expect(slipFindings(report).length / 5839).toBeLessThanOrEqual(0.005);
  });
});
