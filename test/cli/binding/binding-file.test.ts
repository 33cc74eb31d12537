import { afterAll, describe, expect, it } from 'vitest';
import { bindColumns } from '../../../cli/binding/bind.js';
import { parseBindingFile, readBindingFile, withCommandLine } from '../../../cli/binding/binding-file.js';
import { BindingError } from '../../../cli/binding/types.js';
import { TempDir } from '../readers/helpers.js';
import { textBatch } from './fixtures.js';

const tmp = new TempDir();
afterAll(() => tmp.remove());

const FILE = `# Table 2 of a paper, typed in by hand: the names say nothing.
starsieve-binding: 1
description: literature table
columns:
  c1: id
  c2: { quantity: mass, unit: solMass }
  c3: { quantity: mass, error: symmetric }
  c4: { quantity: luminosity, unit: log(solLum) }
  c5: { quantity: luminosity, error: lower, unit: dex }
  c6: { quantity: luminosity, error: upper, unit: dex }
  c7: { quantity: teff, unit: K }
  c8: radius
  c9: none
`;

function bindingError(f: () => unknown): BindingError {
  try {
    f();
  } catch (e) {
    if (e instanceof BindingError) return e;
    throw e;
  }
  throw new Error('expected a BindingError');
}

describe('the binding file', () => {
  it('turns into roles and units, remembering the line each came from', () => {
    const o = parseBindingFile(FILE, 'b.yaml');
    expect(o.bind).toEqual({
      c1: 'id',
      c2: 'mass',
      c3: 'mass.err',
      c4: 'luminosity',
      c5: 'luminosity.errLo',
      c6: 'luminosity.errHi',
      c7: 'teff',
      c8: 'radius',
      c9: 'none',
    });
    expect(o.units).toEqual({ c2: 'solMass', c4: 'log(solLum)', c5: 'dex', c6: 'dex', c7: 'K' });
    expect(o.origins?.c4).toBe('the binding file b.yaml, line 8');
  });

  it('is also valid as JSON', () => {
    const o = parseBindingFile('{"columns": {"a": "mass", "b": {"quantity": "mass", "error": "lower"}}}', 'b.json');
    expect(o.bind).toEqual({ a: 'mass', b: 'mass.errLo' });
  });

  it('binds a table whose names say nothing, and the explanation names the file and line', () => {
    // The Sun: M = 1 M_sun, log L = 0 (IAU 2015 B3 nominal L_sun), Teff 5772 K (IAU 2015 B3), R = 1 R_sun.
    const { meta, raw } = textBatch({
      c1: ['Sun'],
      c2: [1],
      c3: [0.01],
      c4: [0],
      c5: [0.01],
      c6: [0.02],
      c7: [5772],
      c8: [1],
      c9: ['x'],
    });
    const b = bindColumns(meta, raw, parseBindingFile(FILE, 'b.yaml'));
    const lum = b.columns.find((c) => c.quantity === 'luminosity')!;
    expect(lum).toMatchObject({ column: 'c4', unit: 'log(solLum)', quantitySource: 'option', unitSource: 'option' });
    expect(lum.errors.map((e) => [e.column, e.role])).toEqual([
      ['c5', 'lo'],
      ['c6', 'hi'],
    ]);
    expect(lum.reason).toBe('`c4`: luminosity as given in the binding file b.yaml, line 8, unit log(solLum) from the binding file b.yaml, line 8');
    expect(b.columns.map((c) => c.column)).not.toContain('c9');
  });

  it('names the line of an entry whose column the catalog does not have', () => {
    const { meta, raw } = textBatch({ a: [1] });
    const e = bindingError(() => bindColumns(meta, raw, parseBindingFile('columns:\n  a: mass\n  zz: teff\n', 'b.yaml')));
    expect(e.message).toMatch(/^the binding file b\.yaml, line 3 names column `zz`, which is not in the file/);
  });

  it('lets --bind and --unit on the command line override the file, column by column', () => {
    const merged = withCommandLine(parseBindingFile(FILE, 'b.yaml'), { bind: { c8: 'none' }, units: { c7: 'kK' } });
    expect(merged.bind.c8).toBe('none');
    expect(merged.units.c7).toBe('kK');
    expect(merged.bind.c2).toBe('mass');
    expect(merged.origins?.c8).toBeUndefined();
    expect(merged.unitOrigins?.c7).toBeUndefined();
    expect(merged.unitOrigins?.c2).toBe('the binding file b.yaml, line 6');
  });

  describe('every mistake names its line and column', () => {
    const cases: [string, string, RegExp][] = [
      ['broken YAML', 'columns:\n  a: mass\n   b: teff\n', /^b\.yaml, line 2, column 6: the binding file is not valid YAML/],
      ['not a mapping', '- a\n- b\n', /^b\.yaml, line 1, column 1: a binding file is a mapping with a `columns` key/],
      ['an unknown top-level key', 'colums:\n  a: mass\n', /^b\.yaml, line 1, column 1: unknown key `colums`/],
      ['a future version', 'starsieve-binding: 2\ncolumns: {}\n', /^b\.yaml, line 1, column 20: starsieve-binding: 2 is not a version/],
      ['columns not a mapping', 'columns: [a, b]\n', /^b\.yaml, line 1, column 10: `columns` must be a mapping/],
      ['an unknown quantity', 'columns:\n  a: { quantity: mas }\n', /^b\.yaml, line 2, column 18: column `a`: quantity "mas" is not one of mass, /],
      ['an unknown role', 'columns:\n  a: mass.error.bar\n', /^b\.yaml, line 2, column 6: column `a`: `mass.error.bar` is not a role/],
      ['an unknown entry key', 'columns:\n  a: { quantity: mass, units: K }\n', /^b\.yaml, line 2, column 24: column `a`: unknown key `units`/],
      ['a bad error side', 'columns:\n  a: { quantity: mass, error: both }\n', /^b\.yaml, line 2, column 31: column `a`: error must be symmetric, lower or upper/],
      ['an error without its quantity', 'columns:\n  a: { error: lower }\n', /^b\.yaml, line 2, column 6: column `a`: an error column needs the numeric quantity/],
      ['an unknown unit', 'columns:\n  a: { quantity: teff, unit: kelvins }\n', /^b\.yaml, line 2, column 30: column `a`: unknown unit `kelvins`/],
      ['a unit of the wrong kind', 'columns:\n  a: { quantity: mass, unit: K }\n', /^b\.yaml, line 2, column 30: column `a` is bound to mass, but its unit `K` \(as the binding file gives it\) is a temperature unit$/],
      ['one role given twice', 'columns:\n  a: mass\n  b: { quantity: mass }\n', /^b\.yaml, line 3, column 6: mass is given to both `a` and `b`/],
      ['an empty entry', 'columns:\n  a: {}\n', /^b\.yaml, line 2, column 6: column `a`: give a quantity, a unit, or both/],
      ['a number instead of a role', 'columns:\n  a: 3\n', /^b\.yaml, line 2, column 6: column `a`: give a role/],
    ];
    for (const [what, text, message] of cases) {
      it(what, () => {
        const e = bindingError(() => parseBindingFile(text, 'b.yaml'));
        expect(e.message).toMatch(message);
      });
    }

    it('a file that cannot be read', () => {
      expect(bindingError(() => readBindingFile(`${tmp.dir}/missing.yaml`)).message).toMatch(/cannot read the binding file .*missing\.yaml: no such file or directory/);
    });
  });
});
