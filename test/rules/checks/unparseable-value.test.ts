import { describe, expect, it } from 'vitest';
import { bindColumns, toBatch } from '../../../cli/binding/bind.js';
import { sentinelValue } from '../../../rules/checks/sentinel-value.js';
import { unparseableValue } from '../../../rules/checks/unparseable-value.js';
import { runRules } from '../../helpers/batch.js';
import { textBatch } from '../../cli/binding/fixtures.js';

function bound(columns: Record<string, (string | null)[]>) {
  const { meta, raw } = textBatch(columns);
  return toBatch(raw, bindColumns(meta, raw, { bind: {}, units: {} }), 0);
}

describe('unparseable-value', () => {
  it('fires on text where a number belongs, one warning per cell with its column and text', () => {
    // Invented cells; only their spelling matters.
    const b = bound({ mass_Msun: ['1.0', '0.8?', 'n/a', '12..5'] });
    const { findings } = runRules([unparseableValue], [b]);
    expect(findings.map((f) => [f.row, f.severity, f.values.mass_Msun])).toEqual([
      [2, 'warning', '0.8?'],
      [3, 'warning', 'n/a'],
      [4, 'warning', '12..5'],
    ]);
  });

  it('stays silent on missing markers and on runs of dots, which sentinel-value reports', () => {
    const b = bound({ mass_Msun: ['', 'NaN', 'null', 'None', '--', '...', '.....'] });
    expect(runRules([unparseableValue], [b]).findings).toEqual([]);
    expect(runRules([sentinelValue], [b]).findings.map((f) => f.values.cells)).toEqual([2]);
  });

  it('reads thousands separators and Fortran exponents, with one note per column', () => {
    // 51,230 K and 1.0D+26 as written in the issue; 3.828D+26 W is 1 L_sun (IAU 2015 B3).
    const b = bound({ teff_K: ['51,230', '5772', '1,234,567.5'], lum_W: ['3.828D+26', '3.828e26', '-1.5d-3'] });
    expect(Array.from(b.quantities.teff!.raw)).toEqual([51230, 5772, 1234567.5]);
    expect(Array.from(b.quantities.luminosity!.raw)).toEqual([3.828e26, 3.828e26, -0.0015]);
    const { findings } = runRules([unparseableValue], [b]);
    expect(findings.map((f) => [f.scope, f.severity, f.columns[0], f.values.cells])).toEqual([
      ['column', 'note', 'teff_K', 2],
      ['column', 'note', 'lum_W', 2],
    ]);
    expect(findings[0].message).toMatch(/thousands separators \(2\).*`51,230` read as 51230/);
    expect(findings[1].message).toMatch(/Fortran D exponent/);
  });

  it('edge: decimal commas stay unparseable, and make the ambiguous `1,234` of the same column unparseable too', () => {
    // `1,23` cannot be a thousands grouping, so the column writes decimal commas; `1,234` in it is then
    // 1.234 or 1234, and is not guessed. `0,123` never is a thousands grouping (leading zero group).
    const b = bound({ mass_Msun: ['1,23', '1,234', '0,123'] });
    expect(Array.from(b.quantities.mass!.raw).every(Number.isNaN)).toBe(true);
    const { findings } = runRules([unparseableValue], [b]);
    expect(findings.map((f) => f.row)).toEqual([1, 2, 3]);
    expect(findings[1].message).toMatch(/decimal commas elsewhere/);
    // Alone, `1,234` reads as 1234.
    expect(Array.from(bound({ teff_K: ['5,772'] }).quantities.teff!.raw)).toEqual([5772]);
  });
});
