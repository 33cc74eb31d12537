/**
 * Binding from the metadata the astronomy formats carry: units (FITS TUNITn, VOTable unit, ECSV
 * unit) and UCDs (FITS TUCDn, VOTable ucd), read by the project's own readers.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { bindColumns } from '../../../cli/binding/bind.js';
import type { Binding } from '../../../cli/binding/types.js';
import { openCatalog } from '../../../cli/readers/open.js';
import { ecsv, fitsTableFile, votable, type TableColumn } from '../../helpers/table-writers.js';
import { TempDir } from '../readers/helpers.js';

const tmp = new TempDir();
afterAll(() => tmp.remove());

async function bindFile(path: string): Promise<Binding> {
  const reader = await openCatalog(path);
  const first = await reader.batches()[Symbol.asyncIterator]().next();
  const binding = bindColumns(reader.columns, first.done ? null : first.value, { bind: {}, units: {} });
  await reader.close();
  return binding;
}

const of = (b: Binding, q: string) => b.columns.find((c) => c.quantity === q);

// The Sun and Vega-like values, from IAU 2015 B3 (nominal L_sun, R_sun, Teff_sun = 5772 K) and from
// memory (a 2.1 M_sun, 40 L_sun, 2.4 R_sun, 9600 K A0 star); names deliberately say nothing.
const STARS: TableColumn[] = [
  { name: 'col_a', type: 'string', ucd: 'meta.id;meta.main', values: ['Sun', 'Vega'] },
  { name: 'col_b', type: 'double', unit: 'solMass', ucd: 'phys.mass;meta.main', values: [1, 2.1] },
  { name: 'col_c', type: 'double', unit: 'solMass', ucd: 'stat.error;phys.mass', values: [0.01, 0.1] },
  { name: 'col_d', type: 'double', unit: 'kg', ucd: 'phys.mass', values: [1.989e30, 4.18e30] },
  { name: 'col_e', type: 'double', unit: 'W', ucd: 'phys.luminosity', values: [3.828e26, 1.53e28] },
  { name: 'col_f', type: 'double', unit: 'solRad', ucd: 'phys.size.radius', values: [1, 2.4] },
  { name: 'col_g', type: 'double', unit: 'solRad', ucd: 'phys.size.radius;stat.min', values: [0.99, 2.3] },
  { name: 'col_h', type: 'double', unit: 'K', ucd: 'phys.temperature.effective', values: [5772, 9600] },
  // A band luminosity is not the bolometric one the rules compare.
  { name: 'col_i', type: 'double', unit: 'W', ucd: 'phys.luminosity;em.X-ray', values: [1e20, 1e21] },
];

describe('binding from file metadata', () => {
  for (const [format, write] of [
    ['FITS (TUNITn, TUCDn)', () => tmp.write('stars.fits', fitsTableFile(STARS))],
    ['VOTable (unit, ucd)', () => tmp.write('stars.vot', votable([{ columns: STARS }]).join(''))],
    ['VOTable BINARY2', () => tmp.write('stars2.vot', votable([{ columns: STARS }], { encoding: 'binary2' }).join(''))],
  ] as const) {
    it(`${format}: UCDs choose the quantity, units come from the metadata, meta.main settles two masses`, async () => {
      const b = await bindFile(write());
      expect(of(b, 'id')).toMatchObject({ column: 'col_a', quantitySource: 'ucd' });
      expect(of(b, 'mass')).toMatchObject({ column: 'col_b', unit: 'solMass', quantitySource: 'ucd', unitSource: 'metadata' });
      expect(of(b, 'mass')!.errors).toEqual([{ role: 'sym', column: 'col_c', columnIndex: 2, unit: 'solMass', negativeStored: false }]);
      expect(of(b, 'luminosity')).toMatchObject({ column: 'col_e', unit: 'W', quantitySource: 'ucd', unitSource: 'metadata' });
      expect(of(b, 'radius')).toMatchObject({ column: 'col_f', unit: 'solRad' });
      expect(of(b, 'teff')).toMatchObject({ column: 'col_h', unit: 'K', unitSource: 'metadata' });
      expect(of(b, 'mass')!.reason).toMatch(/from its UCD `phys\.mass;meta\.main`, unit solMass from the file's metadata/);
      const used = b.columns.flatMap((c) => [c.column, ...c.errors.map((e) => e.column)]);
      expect(used).not.toContain('col_g'); // a bound (stat.min) is neither a value nor an error
      expect(used).not.toContain('col_i'); // an X-ray luminosity
      expect(used).not.toContain('col_d');
    });
  }

  it('ECSV: the header units feed the binding (astropy spellings read as VOUnits)', async () => {
    // 3.828e33 erg/s is 1 L_sun (IAU 2015 B3).
    const cols: TableColumn[] = [
      { name: 'mass', type: 'double', unit: 'solMass', values: [1] },
      { name: 'lum', type: 'double', unit: 'erg / s', values: [3.828e33] },
      { name: 'logg', type: 'double', unit: 'dex(cm / s2)', values: [4.438] },
    ];
    const b = await bindFile(tmp.write('units.ecsv', ecsv(cols).join('')));
    expect(of(b, 'luminosity')).toMatchObject({ unit: 'erg/s', quantitySource: 'name', unitSource: 'metadata' });
    expect(of(b, 'logg')).toMatchObject({ unit: 'log(cm.s-2)', unitSource: 'metadata' });
  });
});
