import { describe, expect, it } from 'vitest';
import { bindColumns, toBatch } from '../../../cli/binding/bind.js';
import { uncertaintyInvalid } from '../../../rules/checks/uncertainty-invalid.js';
import { runRules } from '../../helpers/batch.js';
import { textBatch } from '../../cli/binding/fixtures.js';

/** A batch as the CLI makes it, so the written signs and the column's convention come from the binder. */
function bound(columns: Record<string, (string | null)[]>, bind: Record<string, string> = {}) {
  const { meta, raw } = textBatch(columns);
  return toBatch(raw, bindColumns(meta, raw, { bind, units: {} }), 0);
}
const run = (b: ReturnType<typeof bound>, params: Record<string, string> = {}) => runRules([uncertaintyInvalid], [b], { params: { 'uncertainty-invalid': params } });

describe('uncertainty-invalid', () => {
  it('fires on a negative symmetric error, a lower error with the wrong sign, swapped sides', () => {
    // Invented dwarf masses; only the sign of the error matters.
    const sym = bound({ mass_Msun: ['1.0', '0.8'], e_mass_Msun: ['-0.05', '0.04'] });
    expect(sym.quantities.mass!.errRaw?.symmetric).toBe(true);
    const a = run(sym);
    expect(a.findings.map((f) => [f.row, f.severity, f.suggestion?.value])).toEqual([[1, 'error', 0.05]]);

    // PHL convention: S_MASS_ERROR_MIN negative, S_MASS_ERROR_MAX positive (PHL PROVENANCE.md); the
    // masses and errors are invented.
    const phl = bound({
      S_MASS: ['1.0', '0.9', '1.1', '0.95'],
      S_MASS_ERROR_MIN: ['-0.1', '0.1', '0.2', '-0.05'],
      S_MASS_ERROR_MAX: ['0.1', '0.1', '-0.1', '0.05'],
    });
    expect(phl.quantities.mass!.errRaw?.loStoredNegative).toBe(true);
    const b = run(phl);
    expect(b.findings.map((f) => [f.row, f.severity])).toEqual([
      [2, 'warning'],
      [3, 'warning'],
    ]);
    expect(b.findings[0].message).toMatch(/stores lower uncertainties as negative/);
    expect(b.findings[1].message).toMatch(/swapped/);
  });

  it('stays silent on the archive conventions: -99 K stored-negative Teff errors, dex errors on log L', () => {
    // NASA st_tefferr2 = -99 with st_tefferr1 = 99 (PROVENANCE: real 99 K errors); PHL S_LOG_LUM
    // errors in dex (0.4 dex on log L = -2 is 0.6 of the linear value, no conflict). Teff and log L
    // values are invented.
    const nasa = bound({ st_teff: ['5500', '6100'], st_tefferr1: ['99', '120'], st_tefferr2: ['-99', '-120'] });
    const logL = bound({ S_LOG_LUM: ['-2', '0.5'], S_LOG_LUM_ERROR_MIN: ['-0.4', '-0.05'], S_LOG_LUM_ERROR_MAX: ['0.4', '0.05'] });
    expect(run(nasa).findings).toEqual([]);
    expect(run(logL).findings).toEqual([]);
    expect(run(nasa).reports[0].checked).toBe(2);
  });

  it('warns where the lower error is larger than the value (PHL BD+20 2457: 10.83 -22.96/+22.96 M_sun)', () => {
    // BD+20 2457 as the PHL PROVENANCE.md lists it: "an error larger than the value".
    const b = bound({ S_NAME: ['BD+20 2457', 'HIP 57274'], S_MASS: ['10.83', '0.73'], S_MASS_ERROR_MIN: ['-22.96', '-0.05'], S_MASS_ERROR_MAX: ['22.96', '0.05'] });
    const { findings } = run(b);
    expect(findings.map((f) => [f.id, f.severity])).toEqual([['BD+20 2457', 'warning']]);
    expect(findings[0].values.relativeError).toBeCloseTo(22.96 / 10.83, 4);
    expect(findings[0].expected).toMatchObject({ max: 10.83 });
  });

  it('edge: exact zeros are one note per column (NASA 0.00 errors), not row findings', () => {
    // PSCompPars has 36 st_masserr1 = 0.00 (PROVENANCE): "where the source gave no uncertainty at that
    // precision". The masses are invented.
    const b = bound({ st_mass: ['1.0', '0.9', '1.1'], st_masserr1: ['0.00', '0.00', '0.1'], st_masserr2: ['0.00', '-0.1', '-0.1'] });
    const { findings } = run(b);
    expect(findings.map((f) => [f.scope, f.severity, f.columns[0], f.values.cells])).toEqual([
      ['column', 'note', 'st_masserr2', 1],
      ['column', 'note', 'st_masserr1', 2],
    ]);
  });

  it('edge: many rows of one problem are capped, with one column finding for the rest; rows are accounted for', () => {
    // Eight invented 1.0 M_sun rows, each with a negative symmetric error.
    const n = 8;
    const b = bound({ mass_Msun: Array(n).fill('1.0').concat([null]), e_mass_Msun: Array(n).fill('-0.1').concat([null]) });
    const { findings, reports } = run(b, { maxRowsPerColumn: '3' });
    expect(findings.filter((f) => f.scope === 'row')).toHaveLength(3);
    const col = findings.find((f) => f.scope === 'column')!;
    expect(col.values).toMatchObject({ rows: 8, rowsListed: 3 });
    expect(reports[0].checked).toBe(8);
    expect(reports[0].skipped).toEqual({ 'no uncertainty given': 1 });
  });
});
