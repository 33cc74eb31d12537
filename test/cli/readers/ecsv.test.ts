import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { ecsvUnit } from '../../../cli/readers/ecsv.js';
import { openCatalog } from '../../../cli/readers/open.js';
import { InputError } from '../../../cli/readers/types.js';
import { ecsv, type TableColumn } from '../../helpers/table-writers.js';
import { collect, damagedFileCases, failure, TempDir } from './helpers.js';

const tmp = new TempDir();
afterAll(() => tmp.remove());

// ECSV 1.0 facts (astropy APE 6, as summarised in ../shared/ecosystem-notes.md section 5.5): the
// header is `# %ECSV 1.0` then one YAML document in `# ` lines; `##` lines are comments; the
// delimiter is ' ' (default) or ','; a missing value is an empty field ("" with spaces).
const COLUMNS: TableColumn[] = [
  { name: 'name', type: 'string', values: ['HD 1', 'tau Cet', null] },
  { name: 'mass', type: 'double', unit: 'solMass', description: 'Mass', values: [1.0, 0.78, null] },
  { name: 'lum', type: 'double', unit: 'erg / s', values: [3.828e33, null, 1e30] },
  { name: 'logg', type: 'double', unit: 'dex(cm / s2)', values: [4.44, 4.5, 8.0] },
  { name: 'n', type: 'int32', values: [1, 2, 3] },
  { name: 'flag', type: 'bool', values: [true, false, true] },
];

describe('ECSV', () => {
  for (const delimiter of [' ', ','] as const) {
    it(`reads names, units, types and values with the ${delimiter === ' ' ? 'space' : 'comma'} delimiter`, async () => {
      const text = ecsv(COLUMNS, { delimiter }).join('');
      const reader = await openCatalog(tmp.write(`t${delimiter === ' ' ? 's' : 'c'}.ecsv`, text));
      expect(reader.format).toBe('ecsv');
      expect(reader.columns.map((c) => [c.name, c.unit, c.type])).toEqual([
        ['name', null, 'text'],
        ['mass', 'solMass', 'float'],
        ['lum', 'erg/s', 'float'],
        ['logg', 'log(cm/s2)', 'float'],
        ['n', null, 'integer'],
        ['flag', null, 'boolean'],
      ]);
      expect(reader.columns[1].description).toBe('Mass');
      const r = await collect(reader);
      expect(r.rows).toEqual([
        ['HD 1', '1', '3.828e+33', '4.44', '1', 'True'],
        ['tau Cet', '0.78', '', '4.5', '2', 'False'],
        ['', '', '1e+30', '8', '3', 'True'],
      ]);
      // Header: 2 + datatype (1 + 6) lines, then the names on line 10; the first row is line 11.
      expect(r.lines).toEqual([11 + (delimiter === ',' ? 1 : 0), 12 + (delimiter === ',' ? 1 : 0), 13 + (delimiter === ',' ? 1 : 0)]);
      expect(r.notes.join(' ')).toMatch(/astropy unit strings read as VOUnits: `erg \/ s` as `erg\/s`, `dex\(cm \/ s2\)` as `log\(cm\/s2\)`/);
    });
  }

  it('rewrites astropy unit strings into VOUnits spellings', () => {
    expect(ecsvUnit('solLum')).toBe('solLum');
    expect(ecsvUnit('erg / s')).toBe('erg/s');
    expect(ecsvUnit('dex(cm / s2)')).toBe('log(cm/s2)');
    expect(ecsvUnit('km s-1')).toBe('km.s-1');
    expect(ecsvUnit('m ** 2')).toBe('m**2');
  });

  it('ignores `##` comment lines in the header and accepts !!omap metadata', async () => {
    const text = ecsv([{ name: 'a', type: 'double', unit: 'K', values: [1] }], {
      extraYaml: ['meta: !!omap', '- survey: Thistlewood', '- release: DR1'],
    })
      .join('')
      .replace('# datatype:', '## a comment the standard says readers ignore\n# datatype:');
    const r = await collect(await openCatalog(tmp.write('omap.ecsv', text)));
    expect(r.rows).toEqual([['1']]);
  });

  it('reads .ecsv.gz through gzip, and an ECSV named .csv by its first line', async () => {
    const text = ecsv(COLUMNS).join('');
    const gz = await openCatalog(tmp.write('t.ecsv.gz', gzipSync(text)));
    expect(gz.format).toBe('ecsv');
    expect((await collect(gz)).rows.length).toBe(3);
    const asCsv = await openCatalog(tmp.write('t-named.csv', text));
    expect(asCsv.format).toBe('ecsv');
    await asCsv.close();
  });

  describe('broken headers are InputErrors with the line and column in the file', () => {
    const good = ecsv(COLUMNS).join('');
    const cases: [string, string, RegExp, RegExp][] = [
      ['bad YAML', good.replace('# - {name: "mass"', '# - {name: "mass" ]'), /line 5, column \d+: the ECSV header is not valid YAML/, /line 5/],
      ['no datatype list', '# %ECSV 1.0\n# ---\n# delimiter: ","\na,b\n1,2\n', /has no `datatype` list/, /line 3/],
      ['a delimiter ECSV does not allow', good.replace('# datatype:', "# delimiter: ';'\n# datatype:"), /delimiter ";" is not allowed/, /line 3/],
      ['an entry without a datatype', good.replace(', datatype: int32', ''), /column `n` has no datatype/, /line 8/],
      ['a header line without "# "', good.replace('# - {name: "lum"', '#- {name: "lum"'), /must start with `# `/, /line 6/],
      ['more names than columns', good.replace('name mass lum logg n flag', 'name mass lum logg n flag extra'), /has 7 names, but the ECSV header describes 6 columns/, /line 10/],
    ];
    damagedFileCases(tmp, '.ecsv', cases);

    it('a CSV forced to ECSV', async () => {
      const err = await failure(openCatalog(tmp.write('plain.csv', 'a,b\n1,2\n'), { format: 'ecsv' }));
      expect((err as InputError).message).toMatch(/must start with the line `# %ECSV 1.0`/);
    });
  });
});
