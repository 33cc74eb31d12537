import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { openCatalog } from '../../../cli/readers/open.js';
import { canSelectColumns } from '../../../cli/readers/projection.js';
import { InputError } from '../../../cli/readers/types.js';
import { parquet, type TableColumn } from '../../helpers/table-writers.js';
import { collect, failure, TempDir } from './helpers.js';

const tmp = new TempDir();
afterAll(() => tmp.remove());

const N = 250;
const COLUMNS: TableColumn[] = [
  { name: 'source_id', type: 'int64', values: Array.from({ length: N }, (_, i) => 5937083312363295360n + BigInt(i)) },
  { name: 'mass', type: 'double', unit: 'solMass', ucd: 'phys.mass', description: 'Mass', values: Array.from({ length: N }, (_, i) => (i % 10 === 3 ? null : i % 10 === 4 ? NaN : 0.1 + i / 100)) },
  { name: 'teff', type: 'float', unit: 'K', values: Array.from({ length: N }, (_, i) => 3000 + i) },
  { name: 'nobs', type: 'int32', values: Array.from({ length: N }, (_, i) => (i % 7 === 0 ? null : i)) },
  { name: 'ok', type: 'bool', values: Array.from({ length: N }, (_, i) => (i % 3 === 0 ? null : i % 2 === 0)) },
  { name: 'stage', type: 'string', values: Array.from({ length: N }, (_, i) => (i % 11 === 0 ? null : ['MS', 'giant', 'WD'][i % 3])) },
];

describe('Parquet', () => {
  for (const compression of ['SNAPPY', 'GZIP', 'ZSTD', 'UNCOMPRESSED'] as const) {
    it(`reads ${compression} row groups into typed columns, exact 64-bit ids, nulls apart from NaN`, async () => {
      const path = tmp.write(`t-${compression}.parquet`, await parquet(COLUMNS, { compression, rowGroupRows: 60 }));
      const reader = await openCatalog(path, { batchSize: 25 });
      expect(reader.format).toBe('parquet');
      // Units, UCDs and descriptions come from the Arrow schema parquet-wasm embeds (ARROW:schema).
      expect(reader.columns[1]).toEqual({ name: 'mass', unit: 'solMass', ucd: 'phys.mass', description: 'Mass', type: 'float' });
      expect(reader.columns[0].type).toBe('integer');
      const r = await collect(reader);
      expect(r.stats).toEqual({ records: N, rows: N, unparseable: 0 });
      // Row groups of 60 cut into batches of 25: 25, 25, 10, 25, 25, 10, ...
      expect(r.batchLengths.slice(0, 4)).toEqual([25, 25, 10, 25]);
      expect(r.rows[0][0]).toBe('5937083312363295360');
      expect(r.rows[249][0]).toBe('5937083312363295609');
      expect(r.rows[3][1]).toBeNull(); // a typed null
      expect(r.rows[4][1]).toBeNaN(); // a NaN, which is not a null
      expect(r.rows[5][1]).toBeCloseTo(0.15, 12);
      expect(r.rows[7][2]).toBe(3007);
      expect(r.rows.map((x) => x[3]).slice(0, 3)).toEqual([null, 1, 2]);
      expect(r.rows.map((x) => x[4]).slice(0, 3)).toEqual([null, 'false', 'true']);
      expect(r.rows.map((x) => x[5]).slice(0, 3)).toEqual([null, 'giant', 'WD']);
    });
  }

  it('after the first batch decodes only the columns it is told the rules read', async () => {
    const path = tmp.write('select.parquet', await parquet(COLUMNS, { rowGroupRows: 100 }));
    const reader = await openCatalog(path, { batchSize: 40 });
    expect(canSelectColumns(reader)).toBe(true);
    const it = reader.batches()[Symbol.asyncIterator]();
    const first = (await it.next()).value!;
    expect(first.columns[5].kind).toBe('text');
    expect((first.columns[5].values as (string | null)[]).filter((v) => v !== null).length).toBeGreaterThan(0);
    if (canSelectColumns(reader)) reader.selectColumns([1]);
    let rows = first.length;
    for (let r = await it.next(); !r.done; r = await it.next()) {
      const b = r.value;
      rows += b.length;
      expect(b.columns[1].kind).toBe('number');
      for (const c of [0, 2, 3, 4, 5]) expect(b.columns[c]).toEqual({ kind: 'text', values: new Array(b.length).fill(null) });
    }
    expect(rows).toBe(N);
  });

  it('a truncated file, a file that is not Parquet, and a gzip-compressed one are InputErrors', async () => {
    const bytes = await parquet(COLUMNS);
    const cases: [string, Uint8Array, RegExp][] = [
      ['cut.parquet', bytes.subarray(0, bytes.length - 100), /truncated or damaged Parquet file: .* does not end with PAR1/],
      ['fake.parquet', Buffer.from('PAR1 is how it starts, but this is text PAR1'), /cannot read its footer|damaged Parquet/],
      ['t.parquet.gz', gzipSync(bytes), /gzip-compressed parquet file; parquet needs random access/],
    ];
    for (const [name, data, message] of cases) {
      const err = await failure(openCatalog(tmp.write(name, data)).then(collect));
      expect(err, name).toBeInstanceOf(InputError);
      expect((err as InputError).message, name).toMatch(message);
    }
  });
});
