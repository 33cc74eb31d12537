import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { openCatalog } from '../../../cli/readers/open.js';
import { canSelectColumns } from '../../../cli/readers/projection.js';
import { InputError } from '../../../cli/readers/types.js';
import { REFERENCE, SKIP_SHARED, hasShared } from '../../helpers/cli.js';
import { fitsBintable, fitsCard, fitsHeader, fitsImage, fitsPrimary, fitsTableFile, type FitsColumn } from '../../helpers/table-writers.js';
import { collect, damagedFileCases, failure, TempDir } from './helpers.js';

const tmp = new TempDir();
afterAll(() => tmp.remove());

// The FITS facts checked here are those of the FITS Standard (4.0, section 7.3; as summarised in
// ../shared/ecosystem-notes.md section 5.4): TNULL compares the stored integer, physical =
// TZERO + TSCAL * stored, unsigned 16/32/64-bit integers are stored with TZERO = 2^15, 2^31, 2^63,
// a signed byte is B with TZERO = -128, a logical is 'T' / 'F' / 0 (null), a string ends at NUL.
const ALL_TYPES: FitsColumn[] = [
  { name: 'id', type: 'int64', ucd: 'meta.id', values: [5937083312363295360n, 42n, -1n] },
  { name: 'mass', type: 'double', unit: 'solMass', ucd: 'phys.mass', values: [1.0, null, 0.5] },
  { name: 'teff', type: 'float', unit: 'K', values: [5772, 3500.5, null] },
  { name: 'n_obs', type: 'int32', tnull: -999, values: [12, null, 7] },
  { name: 'flag16', type: 'int16', tnull: -32768, values: [3, -4, null] },
  // TSCAL/TZERO: 0.001 * stored + 10.
  { name: 'scaled', type: 'int32', tscal: 0.001, tzero: 10, values: [1500, -2000, 0] },
  // Unsigned 16-bit: stored = value - 32768. Stored -32768 -> 0, 32767 -> 65535.
  { name: 'u16', type: 'int16', tzero: 32768, values: [-32768, 32767, 0] },
  // Unsigned 32-bit: stored 2147483647 -> 4294967295.
  { name: 'u32', type: 'int32', tzero: 2147483648, values: [2147483647, -2147483648, 0] },
  // Unsigned 64-bit stays exact as text: stored 9223372036854775807 -> 18446744073709551615.
  { name: 'u64', type: 'int64', tzero: 9223372036854775808n, values: [9223372036854775807n, -9223372036854775808n, 0n] },
  // Signed byte: stored 0 -> -128, 255 -> 127.
  { name: 's8', type: 'uint8', tzero: -128, values: [0, 255, 128] },
  { name: 'ok', type: 'bool', values: [true, false, null] },
  { name: 'stage', type: 'string', values: ['MS', null, 'giant'] },
];

describe('FITS binary tables', () => {
  it('decodes L B I J K E D A with TNULL, NaN, TSCAL/TZERO and unsigned integers', async () => {
    const path = tmp.write('types.fits', fitsTableFile(ALL_TYPES));
    const reader = await openCatalog(path);
    expect(reader.format).toBe('fits');
    expect(reader.columns.map((c) => c.name)).toEqual(ALL_TYPES.map((c) => c.name));
    expect(reader.columns[1]).toMatchObject({ unit: 'solMass', ucd: 'phys.mass', type: 'float' });
    expect(reader.columns[0]).toMatchObject({ ucd: 'meta.id', type: 'integer' });
    const r = await collect(reader);
    expect(r.stats).toEqual({ records: 3, rows: 3, unparseable: 0 });
    const col = (name: string) => r.rows.map((row) => row[r.columns.indexOf(name)]);
    // 19-digit ids survive: a double would round 5937083312363295360 to ...5400.
    expect(col('id')).toEqual(['5937083312363295360', '42', '-1']);
    expect(col('mass')).toEqual([1.0, NaN, 0.5]);
    expect(col('teff')).toEqual([5772, 3500.5, NaN]);
    expect(col('n_obs')).toEqual([12, null, 7]);
    expect(col('flag16')).toEqual([3, -4, null]);
    const scaled = col('scaled') as number[];
    expect(scaled[0]).toBeCloseTo(11.5, 12);
    expect(scaled[1]).toBeCloseTo(8, 12);
    expect(scaled[2]).toBe(10);
    expect(col('u16')).toEqual([0, 65535, 32768]);
    expect(col('u32')).toEqual([4294967295, 0, 2147483648]);
    expect(col('u64')).toEqual(['18446744073709551615', '0', '9223372036854775808']);
    expect(col('s8')).toEqual([-128, 127, 0]);
    expect(col('ok')).toEqual(['true', 'false', null]);
    expect(col('stage')).toEqual(['MS', null, 'giant']);
    expect(r.lines).toEqual([null, null, null]);
  });

  it('reads long strings continued over CONTINUE cards, and quotes inside strings', async () => {
    const long = 'Luminosity from the SED fit, in solar units of 3.828e26 W (IAU 2015 B3), with the bolometric correction of the survey';
    const cols: FitsColumn[] = [{ name: "lum_o'neil", type: 'double', unit: 'solLum', description: long, values: [1.5] }];
    const hdu = fitsBintable(cols);
    // The writer splits the TCOMM value over CONTINUE cards; prove it did.
    expect(hdu[0].toString('latin1')).toContain('CONTINUE  ');
    const reader = await openCatalog(tmp.write('long.fits', Buffer.concat([fitsPrimary(), ...hdu])));
    expect(reader.columns[0]).toMatchObject({ name: "lum_o'neil", unit: 'solLum', description: long });
    await reader.close();
  });

  it('leaves out columns of unsupported types with a note, and reads the others at the right offsets', async () => {
    const cols: FitsColumn[] = [
      { name: 'a', type: 'double', values: [1, 2] },
      { name: 'cplx', type: 'double', form: 'C', values: [null, null] },
      { name: 'bits', type: 'double', form: '12X', values: [null, null] },
      { name: 'vec', type: 'double', form: '3E', values: [null, null] },
      { name: 'heap', type: 'double', form: '1PE(5)', values: [null, null] },
      { name: 'b', type: 'int32', values: [7, 8] },
    ];
    const reader = await openCatalog(tmp.write('unsupported.fits', fitsTableFile(cols)));
    const r = await collect(reader);
    expect(r.columns).toEqual(['a', 'b']);
    expect(r.rows).toEqual([
      [1, 7],
      [2, 8],
    ]);
    const notes = r.notes.join('\n');
    for (const name of ['cplx', 'bits', 'vec', 'heap']) expect(notes).toMatch(new RegExp(`\`${name}\`.*unsupported column type`));
    expect(notes).toMatch(/`vec`.*3 values per row/);
  });

  it('reads the first binary table by default and another with --hdu; other HDUs give clear errors', async () => {
    const t1 = fitsBintable([{ name: 'x', type: 'double', values: [1, 2] }]);
    const t2 = fitsBintable([{ name: 'y', type: 'double', values: [3, 4, 5] }]);
    const path = tmp.write('multi.fits', Buffer.concat([fitsPrimary(), ...fitsImage(3, 2), ...t1, ...t2]));
    const first = await collect(await openCatalog(path));
    expect(first.columns).toEqual(['x']);
    expect(first.notes.join(' ')).toMatch(/read HDU 2, the first binary table/);
    const second = await collect(await openCatalog(path, { hdu: 3 }));
    expect(second.rows).toEqual([[3], [4], [5]]);
    const cases: [number, RegExp][] = [
      [0, /HDU 0 is the primary array, not a binary table/],
      [1, /HDU 1 is the IMAGE, not a binary table/],
      [9, /has no HDU 9: it holds 4 HDUs/],
    ];
    for (const [hdu, message] of cases) {
      const err = await failure(openCatalog(path, { hdu }));
      expect(err).toBeInstanceOf(InputError);
      expect((err as InputError).message).toMatch(message);
    }
    const none = await failure(openCatalog(tmp.write('image-only.fits', Buffer.concat([fitsPrimary(), ...fitsImage(2, 2)]))));
    expect((none as InputError).message).toMatch(/holds no binary table \(HDUs: 0 primary array; 1 IMAGE\)/);
  });

  it('gives the same rows whatever the batch size and the read size, and through gzip', async () => {
    const n = 1000;
    const cols: FitsColumn[] = [
      { name: 'i', type: 'int32', values: Array.from({ length: n }, (_, i) => i) },
      { name: 'v', type: 'double', values: Array.from({ length: n }, (_, i) => (i % 7 === 0 ? null : i / 3)) },
      { name: 's', type: 'string', values: Array.from({ length: n }, (_, i) => `star-${i}`) },
    ];
    const bytes = fitsTableFile(cols);
    const plain = await collect(await openCatalog(tmp.write('big.fits', bytes)));
    expect(plain.rows.length).toBe(n);
    const small = await collect(await openCatalog(tmp.write('big2.fits', bytes), { batchSize: 33, readChunkBytes: 97 }));
    expect(small.rows).toEqual(plain.rows);
    expect(small.batchLengths[0]).toBe(33);
    const gz = await openCatalog(tmp.write('big.fits.gz', gzipSync(bytes)), { batchSize: 100 });
    expect(gz.format).toBe('fits');
    expect((await collect(gz)).rows).toEqual(plain.rows);
  });

  it('decodes only the selected columns once told which the rules read', async () => {
    const cols: FitsColumn[] = [
      { name: 'a', type: 'double', values: [1, 2, 3, 4] },
      { name: 'b', type: 'string', values: ['p', 'q', 'r', 's'] },
    ];
    const reader = await openCatalog(tmp.write('select.fits', fitsTableFile(cols)), { batchSize: 2 });
    expect(canSelectColumns(reader)).toBe(true);
    const it = reader.batches()[Symbol.asyncIterator]();
    const first = (await it.next()).value!;
    expect(first.columns[1]).toEqual({ kind: 'text', values: ['p', 'q'] });
    if (canSelectColumns(reader)) reader.selectColumns([0]);
    const second = (await it.next()).value!;
    expect(Array.from(second.columns[0].values as Float64Array)).toEqual([3, 4]);
    expect(second.columns[1]).toEqual({ kind: 'text', values: [null, null] });
    await reader.close();
  });

  describe('damaged files are InputErrors with the position', () => {
    const good = fitsTableFile([
      { name: 'a', type: 'double', values: Array.from({ length: 100 }, (_, i) => i) },
      { name: 'b', type: 'int16', values: Array.from({ length: 100 }, (_, i) => i) },
    ]);
    // Header blocks: primary 2880, table header 2880; the data (100 rows of 10 bytes) start at 5760.
    const cases: [string, Buffer, RegExp, RegExp][] = [
      ['truncated inside the data', good.subarray(0, 5760 + 10 * 41 + 3), /truncated file: HDU 1 promises 100 rows.*after 41 complete rows/, /row 42/],
      ['truncated inside a header', good.subarray(0, 2880 + 1000), /ends inside HDU 1's header: a 2880-byte block has only 1000 bytes/, /byte/],
      ['not FITS at all', Buffer.from('SIMPLE  = nonsense'.padEnd(100)), /ends inside HDU 0's header/, /byte/],
      [
        'header not padded to 2880 bytes',
        Buffer.concat([fitsPrimary().subarray(0, 2880), Buffer.from((fitsCard('XTENSION', 'BINTABLE') + 'END'.padEnd(80) + 'x').padEnd(2880, 'x'), 'latin1')]),
        /END card of HDU 1 is followed by non-blank bytes.*wrong block size/,
        /HDU 1, header card 2/,
      ],
      [
        'blocks of 2048 bytes',
        Buffer.concat([fitsPrimary().subarray(0, 2048), ...fitsBintable([{ name: 'a', type: 'double', values: [1] }])]),
        /END card of HDU 0 is followed by non-blank bytes.*wrong block size/,
        /HDU 0, header card 5/,
      ],
      [
        'TFORM widths that do not add up to NAXIS1',
        Buffer.concat([
          fitsPrimary(),
          fitsHeader([
            fitsCard('XTENSION', 'BINTABLE'),
            fitsCard('BITPIX', 8),
            fitsCard('NAXIS', 2),
            fitsCard('NAXIS1', 12),
            fitsCard('NAXIS2', 1),
            fitsCard('PCOUNT', 0),
            fitsCard('GCOUNT', 1),
            fitsCard('TFIELDS', 1),
            fitsCard('TFORM1', 'D'),
          ]),
          Buffer.alloc(2880),
        ]),
        /TFORMn widths add up to 8 bytes per row, but NAXIS1 = 12/,
        /HDU 1, header card 4/,
      ],
    ];
    damagedFileCases(tmp, '.fits', cases);

    it('a truncated gzip FITS is found while streaming, at the row where it ends', async () => {
      const gz = gzipSync(good);
      const err = await failure(openCatalog(tmp.write('cut.fits.gz', gz.subarray(0, gz.length - 30))).then(collect));
      expect(err).toBeInstanceOf(InputError);
      expect((err as InputError).message).toMatch(/gzip data is damaged or truncated|truncated file/);
    });
  });
});

describe.skipIf(!hasShared)('real FITS-plus tables (../shared/reference-data/mdwarf-relations-fits)', () => {
  if (!hasShared) it.skip(SKIP_SHARED, () => {});
  const dir = join(REFERENCE, 'mdwarf-relations-fits');

  it('table 3 (Morrell & Naylor 2019): 1401 rows, Teff 3000-4400 K in 1 K steps, units from TUNIT', async () => {
    const reader = await openCatalog(join(dir, 'table3-tsed-r-relation.fits'));
    expect(reader.columns.map((c) => [c.name, c.unit])).toEqual([
      ['tsed', 'K'],
      ['radius', 'solRad'],
      ['radius_lbound', 'solRad'],
      ['radius_ubound', 'solRad'],
    ]);
    expect(reader.columns[0].ucd).toBe('phys.temperature.effective');
    const r = await collect(reader);
    // PROVENANCE.md: 1401 rows, tsed from 3000 to 4400 K in 1 K steps (a 64-bit integer column).
    expect(r.stats.rows).toBe(1401);
    expect(r.rows[0][0]).toBe('3000');
    expect(r.rows[1400][0]).toBe('4400');
    // The primary HDU holds the VOTable description (VOTMETA = T); the table is HDU 1.
    expect(r.notes.join(' ')).toMatch(/FITS-plus/);
    for (const row of r.rows) expect((row[2] as number) <= (row[1] as number) && (row[1] as number) <= (row[3] as number)).toBe(true);
  });

  it('table 4: 98 rows, lsed linear in L_sun from 0.003 to 0.100 (PROVENANCE.md)', async () => {
    const reader = await openCatalog(join(dir, 'table4-lsed-r-relation.fits'), { hdu: 1 });
    expect(reader.columns[0]).toMatchObject({ name: 'lsed', unit: 'solLum', ucd: 'phys.luminosity' });
    const r = await collect(reader);
    expect(r.stats.rows).toBe(98);
    expect(r.rows[0][0]).toBeCloseTo(0.003, 12);
    expect(r.rows[97][0]).toBeCloseTo(0.1, 12);
  });
});
