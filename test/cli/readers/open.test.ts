import { tableFromArrays, tableToIPC } from 'apache-arrow';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { FORMATS, openCatalog } from '../../../cli/readers/open.js';
import { InputError } from '../../../cli/readers/types.js';
import { ecsv, fitsTableFile, parquet, votable, type TableColumn } from '../../helpers/table-writers.js';
import { collect, failure, TempDir } from './helpers.js';

const tmp = new TempDir();
afterAll(() => tmp.remove());

const arrowTable = tableFromArrays({ v: new Float64Array([1, 2]) });

describe('openCatalog', () => {
  it('sniffs Arrow file and stream formats whatever the extension', async () => {
    const file = tmp.write('data.dat', tableToIPC(arrowTable, 'file'));
    const stream = tmp.write('data.bin', tableToIPC(arrowTable, 'stream'));
    for (const p of [file, stream]) {
      const reader = await openCatalog(p, {});
      expect(reader.format).toBe('arrow');
      expect((await collect(reader)).rows).toEqual([[1], [2]]);
    }
  });

  it('sniffs FITS, VOTable, Parquet and ECSV from their first bytes, whatever the extension', async () => {
    const cols: TableColumn[] = [{ name: 'v', type: 'double', values: [1, 2] }];
    const files: [string, string | Uint8Array][] = [
      ['fits', fitsTableFile(cols)],
      ['votable', votable([{ columns: cols }]).join('')],
      ['parquet', await parquet(cols)],
      ['ecsv', ecsv(cols).join('')],
    ];
    for (const [format, bytes] of files) {
      const reader = await openCatalog(tmp.write(`${format}.dat`, bytes), {});
      expect(reader.format).toBe(format);
      expect((await collect(reader)).rows.map((r) => Number(r[0]))).toEqual([1, 2]);
    }
  });

  it('chooses CSV or TSV by extension', async () => {
    const csv = await openCatalog(tmp.write('a.csv', 'x;y\n1;2\n'), {});
    expect(csv.format).toBe('csv');
    expect(csv.columns.map((c) => c.name)).toEqual(['x', 'y']);
    await csv.close();
    // A .tsv is read with tabs even when its names hold more commas than tabs.
    const tsv = await openCatalog(tmp.write('a.tsv', 'a,b,c\td\n1\t2\n'), {});
    expect(tsv.format).toBe('tsv');
    expect(tsv.columns.map((c) => c.name)).toEqual(['a,b,c', 'd']);
    await tsv.close();
    const txt = await openCatalog(tmp.write('a.txt', 'p|q\n1|2\n'), {});
    expect(txt.columns.map((c) => c.name)).toEqual(['p', 'q']);
    await txt.close();
  });

  it('lets an explicit format win over the extension', async () => {
    const reader = await openCatalog(tmp.write('table.arrow.txt', 'a,b\n1,2\n'), { format: 'CSV', batchSize: 1 });
    const r = await collect(reader);
    expect(r.rows).toEqual([['1', '2']]);
    const arrow = await openCatalog(tmp.write('noext', tableToIPC(arrowTable, 'stream')), { format: 'feather' });
    expect(arrow.format).toBe('arrow');
    await arrow.close();
  });

  it('gives InputErrors for an unknown format, a missing file, a directory and an unknown extension', async () => {
    // Thunks, so each open starts only when awaited: a rejection created early would go unhandled.
    const cases: [() => Promise<unknown>, RegExp][] = [
      [() => openCatalog(tmp.write('u.csv', 'a\n'), { format: 'fits-ish' }), /^unknown format 'fits-ish' .*known: fits, votable, parquet, arrow, ecsv, csv, tsv/],
      [() => openCatalog(tmp.dir + '/missing.csv', {}), /^cannot read .*missing\.csv: no such file or directory$/],
      [() => openCatalog(tmp.dir + '/missing.csv', { format: 'csv' }), /^cannot read .*missing\.csv: /],
      [() => openCatalog(tmp.dir, {}), /^cannot read .*: it is a directory$/],
      [() => openCatalog(tmp.write('cat.dat', 'a,b\n'), {}), /cannot tell the format .*'\.dat'.*--format/],
      [() => openCatalog(tmp.write('cat.arrow.gz', gzipSync(tableToIPC(arrowTable, 'stream'))), {}), /gzip-compressed arrow file; arrow needs random access/],
      [() => openCatalog(tmp.write('h.csv', 'a\n1\n'), { hdu: 1 }), /--hdu applies to FITS files, but .* is read as csv/],
      [() => openCatalog(tmp.write('t.csv', 'a\n1\n'), { table: 2 }), /--table applies to VOTable files/],
      [() => openCatalog('-', { format: 'fits' }), /standard input can be read only as CSV or TSV/],
    ];
    for (const [open, message] of cases) {
      const err = await failure(open());
      expect(err).toBeInstanceOf(InputError);
      expect((err as InputError).message).toMatch(message);
    }
  });

  it('keeps one table entry per format, with distinct names and extensions', () => {
    const names = FORMATS.flatMap((f) => [f.format, ...f.aliases]);
    const exts = FORMATS.flatMap((f) => f.extensions);
    expect(new Set(names).size).toBe(names.length);
    expect(new Set(exts).size).toBe(exts.length);
  });
});
