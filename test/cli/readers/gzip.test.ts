import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { openCatalog } from '../../../cli/readers/open.js';
import { InputError } from '../../../cli/readers/types.js';
import { ecsv, fitsTableFile, votable, type TableColumn } from '../../helpers/table-writers.js';
import { collect, failure, TempDir } from './helpers.js';

const tmp = new TempDir();
afterAll(() => tmp.remove());

const COLUMNS: TableColumn[] = [
  { name: 'star', type: 'string', values: ['a', 'b', 'c'] },
  { name: 'mass', type: 'double', unit: 'solMass', values: [1, 2, null] },
];
const CSV = '# a comment\nstar,mass\na,1\nb,2\nc,\n';

describe('gzip inputs', () => {
  it('reads every text format (and FITS) through gunzip, with the same rows and lines as the plain file', async () => {
    const plain = await collect(await openCatalog(tmp.write('p.csv', CSV)));
    for (const [name, bytes, format] of [
      ['c.csv.gz', gzipSync(CSV), 'csv'],
      ['t.tsv.gz', gzipSync(CSV.replace(/,/g, '\t')), 'tsv'],
      ['e.ecsv.gz', gzipSync(ecsv(COLUMNS).join('')), 'ecsv'],
      ['v.vot.gz', gzipSync(votable([{ columns: COLUMNS }]).join('')), 'votable'],
      ['f.fits.gz', gzipSync(fitsTableFile(COLUMNS)), 'fits'],
    ] as const) {
      const reader = await openCatalog(tmp.write(name, bytes), { readChunkBytes: 5 });
      expect(reader.format, name).toBe(format);
      const r = await collect(reader);
      expect(r.rows.map((row) => [row[0], row[1] === null || row[1] === '' || Number.isNaN(row[1]) ? null : Number(row[1])]), name).toEqual([
        ['a', 1],
        ['b', 2],
        ['c', null],
      ]);
      if (format === 'csv') expect(r.lines).toEqual(plain.lines);
    }
  });

  it('looks inside: the decompressed first bytes choose the format, whatever the name says', async () => {
    const reader = await openCatalog(tmp.write('mystery.gz', gzipSync(fitsTableFile(COLUMNS))));
    expect(reader.format).toBe('fits');
    await reader.close();
  });

  it('stops a file that inflates past the guard', async () => {
    const bomb = gzipSync(Buffer.alloc(4 << 20, 'a'.charCodeAt(0)));
    const err = await failure(openCatalog(tmp.write('bomb.csv.gz', bomb), { maxInflatedBytes: 1 << 20 }).then(collect));
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).message).toMatch(/decompresses to more than 1048576 bytes .*decompression bomb/);
  });

  it('reports damaged or truncated gzip data as an InputError, not a crash', async () => {
    const gz = gzipSync(CSV.repeat(2000));
    const cut = await failure(openCatalog(tmp.write('cut.csv.gz', gz.subarray(0, gz.length - 20))).then(collect));
    expect(cut).toBeInstanceOf(InputError);
    expect((cut as InputError).message).toMatch(/gzip data is damaged or truncated \(unexpected end of file\)/);
    const flipped = Buffer.from(gz);
    flipped[gz.length >> 1] ^= 0xff;
    const bad = await failure(openCatalog(tmp.write('flipped.csv.gz', flipped)).then(collect));
    expect(bad).toBeInstanceOf(InputError);
  });
});
