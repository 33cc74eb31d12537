import { describe, expect, it } from 'vitest';
import { bindColumns, toBatch } from '../../../cli/binding/bind.js';
import { eddingtonLimit } from '../../../rules/checks/eddington-limit.js';
import { sentinelValue } from '../../../rules/checks/sentinel-value.js';
import { valueOutOfRange } from '../../../rules/checks/value-out-of-range.js';
import { makeBatch, runRules } from '../../helpers/batch.js';
import { textBatch } from '../../cli/binding/fixtures.js';

/** A batch the way the CLI makes it: text cells through the binder. */
function bound(columns: Record<string, (string | null)[]>) {
  const { meta, raw } = textBatch(columns);
  return toBatch(raw, bindColumns(meta, raw, { bind: {}, units: {} }), 0);
}

/** Twenty-five ordinary M dwarfs (about 3000-3500 K, 0.2-0.5 M_sun; Mamajek's dwarf table, physics-reference.md §6), then the cells under test. */
const family = (n: number, f: (i: number) => number) => Array.from({ length: n }, (_, i) => f(i));

describe('sentinel-value', () => {
  it('fires once per column with the count, and other rules then see the cells as missing', () => {
    // -999 is no mass and 99999 K is 20 times the warmest of these dwarfs: both codes (common practice).
    const mass = [...family(25, (i) => 0.2 + 0.01 * i), -999, -999, -999];
    const teff = [...family(25, (i) => 3000 + 20 * i), 99999, 3100, 3200];
    const lum = [...family(25, () => 0.01), 0.01, 0.01, 0.01];
    const b = makeBatch({ mass: { values: mass }, teff: { values: teff }, luminosity: { values: lum } });
    const { findings, reports } = runRules([sentinelValue, valueOutOfRange, eddingtonLimit], [b]);
    const notes = findings.filter((f) => f.rule === 'sentinel-value');
    expect(notes.map((f) => [f.columns[0], f.values.cells, f.scope, f.severity])).toEqual([
      ['mass', 3, 'column', 'note'],
      ['teff', 1, 'column', 'note'],
    ]);
    expect(notes[0].values['-999']).toBe(3);
    expect(notes[1].values['99999']).toBe(1);
    expect(notes[0].message).toMatch(/3 cells hold a missing-value code \(`-999` 3 times\), first on row 26/);
    // No other rule judges the coded cells: no "non-positive mass", no Eddington test on -999.
    expect(findings.filter((f) => f.rule !== 'sentinel-value')).toEqual([]);
    const edd = reports.find((r) => r.id === 'eddington-limit')!;
    expect(edd.skipped['mass or luminosity missing or unusable']).toBe(3);
  });

  it('stays silent on real -99 K Teff uncertainties and on codes that are plausible values', () => {
    // NASA PSCompPars st_tefferr2 = -99.00 and PHL S_TEMPERATURE_ERROR_MIN = -99 are real 99 K
    // errors (their PROVENANCE files); the Teff values are invented. A mass of 99.99 M_sun among O
    // stars of 20-80 M_sun (from memory: O-star masses, cf. Mamajek O3V 59 M_sun in §6) is a value.
    const b = bound({
      st_teff: ['5500', '6100', '4800'],
      st_tefferr1: ['99', '120', '80'],
      st_tefferr2: ['-99', '-120', '-80'],
    });
    expect(b.quantities.teff!.errRaw?.loStoredNegative).toBe(true);
    const o = makeBatch({ mass: { values: [...family(25, (i) => 20 + 2.4 * i), 99.99] } });
    const { findings } = runRules([sentinelValue], [b]);
    expect(findings).toEqual([]);
    expect(runRules([sentinelValue], [o]).findings).toEqual([]);
    expect(b.quantities.teff!.errLo![0]).toBe(99);
  });

  it('reads runs of dots as codes (Mamajek table: `...`, `.....`), one note per column', () => {
    // Mamajek2022-04-16.csv writes missing cells as `...`, `....` and `.....` (LIFE PROVENANCE.md).
    const b = bound({ SpT: ['O3V', 'Y4V', 'T9V'], Msun: ['59', '...', ' ..... '], R_Rsun: ['13.43', '...', '0.1'] });
    expect(b.problems.map((p) => p.kind)).toEqual(['sentinel', 'sentinel', 'sentinel']);
    const { findings } = runRules([sentinelValue], [b]);
    expect(findings.map((f) => [f.columns[0], f.values.cells])).toEqual([
      ['Msun', 2],
      ['R_Rsun', 1],
    ]);
    expect(findings[0].message).toMatch(/`\.\.\.` once, `\.\.\.\.\.` once/);
  });

  it('edge: an uncertainty written as a code is blanked only where it is as large as its value', () => {
    // e_mass = -999 on 1.0 M_sun: a code; e_teff = 999 on an invented 30 000 K B star: a real
    // (large) error.
    const b = makeBatch({ mass: { values: [1.0, 0.8] }, teff: { values: [30000, 5000] } });
    const m = b.quantities.mass!;
    m.errLo = Float64Array.from([999, 0.05]);
    m.errHi = Float64Array.from([999, 0.05]);
    const written = Float64Array.from([-999, 0.05]);
    m.errRaw = { lo: written, hi: written, loColumn: 'e_mass', hiColumn: 'e_mass', symmetric: true, loStoredNegative: false };
    const t = b.quantities.teff!;
    t.errLo = Float64Array.from([999, 50]);
    t.errHi = t.errLo.slice();
    const wt = Float64Array.from([999, 50]);
    t.errRaw = { lo: wt, hi: wt, loColumn: 'e_teff', hiColumn: 'e_teff', symmetric: true, loStoredNegative: false };
    const { findings, reports } = runRules([sentinelValue], [b]);
    expect(findings.map((f) => [f.columns[0], f.values.cells])).toEqual([['e_mass', 1]]);
    expect(Number.isNaN(m.errLo[0]) && Number.isNaN(m.errHi[0])).toBe(true);
    expect(t.errLo[0]).toBe(999);
    expect(reports[0].checked).toBe(2);
  });

  it('edge: the code list is a parameter; a family needs 20 values, else only impossible codes count', () => {
    // Invented M-dwarf Teffs; too few for a family.
    const few = makeBatch({ teff: { values: [3000, 3100, 99999] } });
    expect(runRules([sentinelValue], [few]).findings).toEqual([]);
    const custom = makeBatch({ mass: { values: [1, -1, 2] } });
    const r = runRules([sentinelValue], [custom], { params: { 'sentinel-value': { codes: '-1' } } });
    expect(r.findings.map((f) => f.values['-1'])).toEqual([1]);
    expect(() => runRules([sentinelValue], [custom], { params: { 'sentinel-value': { codes: 'x' } } })).toThrow(/codes/);
  });
});
