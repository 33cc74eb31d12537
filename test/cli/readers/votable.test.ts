import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { afterAll, describe, expect, it } from 'vitest';
import { openCatalog } from '../../../cli/readers/open.js';
import { InputError } from '../../../cli/readers/types.js';
import { REFERENCE, SKIP_SHARED, hasShared } from '../../helpers/cli.js';
import { votable, type VoColumn, type VoTable } from '../../helpers/table-writers.js';
import { collect, damagedFileCases, failure, TempDir } from './helpers.js';

const tmp = new TempDir();
afterAll(() => tmp.remove());

// VOTable 1.4 facts used here (IVOA REC 2019-10-21, as summarised in ../shared/ecosystem-notes.md
// section 5.3): an empty TD is null; VALUES null gives an integer's magic null; BINARY2 rows start
// with (N+7)/8 null-flag bytes, the MSB of the first byte for column 1 and the MSB of the second
// for column 9; cells are big-endian; variable-length arrays carry a 4-byte count.
const COLUMNS: VoColumn[] = [
  { name: 'source_id', type: 'int64', ucd: 'meta.id;meta.main', values: [5937083312363295360n, 2n, null] },
  { name: 'mass', type: 'double', unit: 'solMass', ucd: 'phys.mass', description: 'Stellar mass', values: [1.0, null, 0.25] },
  { name: 'e_mass', type: 'float', unit: 'solMass', ucd: 'stat.error;phys.mass', values: [0.05, 0.1, null] },
  { name: 'nobs', type: 'int32', nullValue: '-99', values: [3, null, 12] },
  { name: 'short', type: 'int16', values: [-5, 7, null] },
  { name: 'byte', type: 'uint8', values: [255, 0, null] },
  { name: 'ok', type: 'bool', values: [true, false, null] },
  { name: 'name', type: 'string', values: ['HD 1 & co', null, 'x<y'] },
  // Column 9: its null flag is the MSB of the second flag byte.
  { name: 'teff', type: 'double', unit: 'K', values: [null, 5772, 3000] },
  { name: 'uname', type: 'string', datatype: 'unicodeChar', values: ['Ωmega', 'b', null] },
  { name: 'fixed', type: 'string', arraysize: '6', values: ['MS', 'giant', null] },
];
const TABLE: VoTable = { name: 'stars', columns: COLUMNS };

/** The rows every encoding must give: TABLEDATA keeps text, the binary encodings give numbers. */
function expectValues(rows: (string | number | null)[][], textual: boolean) {
  const col = (k: number) => rows.map((r) => r[k]);
  const num = (v: number | null) => (v === null ? null : textual ? String(v) : v);
  expect(col(0)).toEqual(['5937083312363295360', '2', null]);
  expect(col(1).map((v) => (v === null ? null : Number(v)))).toEqual([1, null, 0.25]);
  expect(Number(col(2)[0])).toBeCloseTo(0.05, 6);
  expect(col(2)[2]).toBeNull();
  expect(col(3)).toEqual([num(3), null, num(12)]);
  expect(col(4)).toEqual([num(-5), num(7), null]);
  expect(col(5)).toEqual([num(255), num(0), null]);
  expect(col(6)).toEqual(['true', 'false', null]);
  expect(col(7)).toEqual(['HD 1 & co', null, 'x<y']);
  expect(col(8)).toEqual([null, num(5772), num(3000)]);
  expect(col(9)).toEqual(['Ωmega', 'b', null]);
  expect(col(10)).toEqual(['MS', 'giant', null]);
}

/** The document with its base64 STREAM cut to the first `chars` characters. */
function cutStream(doc: string, chars: number): string {
  return doc.replace(/(<STREAM encoding="base64">)([\s\S]*?)(<\/STREAM>)/, (_m, open: string, body: string, close: string) => `${open}\n${body.replace(/\s+/g, '').slice(0, chars)}\n${close}`);
}

describe('VOTable', () => {
  it('TABLEDATA: FIELD metadata, empty TD as null, VALUES null, exact long ids, lines per row', async () => {
    const reader = await openCatalog(tmp.write('t.vot', votable([TABLE]).join('')));
    expect(reader.format).toBe('votable');
    expect(reader.columns[1]).toEqual({ name: 'mass', unit: 'solMass', ucd: 'phys.mass', description: 'Stellar mass', type: 'float' });
    expect(reader.columns[0]).toMatchObject({ ucd: 'meta.id;meta.main', type: 'integer' });
    const r = await collect(reader);
    expect(r.stats).toEqual({ records: 3, rows: 3, unparseable: 0 });
    expectValues(r.rows, true);
    // Rows sit on consecutive lines after the FIELDs (the writer puts one TR per line).
    expect(r.lines[1]).toBe((r.lines[0] as number) + 1);
  });

  for (const encoding of ['binary2', 'binary'] as const) {
    it(`${encoding.toUpperCase()}: the same values from base64, big-endian cells${encoding === 'binary2' ? ' and null flags' : ' and VALUES null'}`, async () => {
      // BINARY has no null flags: only magic values (and NaN) mark nulls, so give each integer one.
      const cols: VoColumn[] =
        encoding === 'binary2'
          ? COLUMNS
          : COLUMNS.map((c) =>
              c.type === 'int16' ? { ...c, nullValue: '-32768' } : c.type === 'uint8' ? { ...c, nullValue: '254', values: [255, 0, 254] } : c.type === 'int64' ? { ...c, nullValue: '-1' } : c,
            );
      const text = votable([{ name: 'stars', columns: cols }], { encoding, lineWidth: 13 }).join('');
      const r = await collect(await openCatalog(tmp.write(`${encoding}.vot`, text), { batchSize: 2, readChunkBytes: 50 }));
      expect(r.batchLengths).toEqual([2, 1]);
      if (encoding === 'binary2') {
        expectValues(r.rows, false);
      } else {
        expect(r.rows.map((row) => row[3])).toEqual([3, null, 12]);
        expect(r.rows.map((row) => row[5])).toEqual([255, 0, null]);
        expect(r.rows.map((row) => row[1])).toEqual([1, NaN, 0.25]);
      }
      expect(r.lines).toEqual([null, null, null]);
    });
  }

  it('reads the first TABLE by default and another with --table; a missing one is an error', async () => {
    const t2: VoTable = { name: 'second', columns: [{ name: 'z', type: 'double', values: [9, 8] }] };
    const path = tmp.write('two.vot', votable([TABLE, t2]).join(''));
    expect((await collect(await openCatalog(path))).columns[0]).toBe('source_id');
    const second = await collect(await openCatalog(path, { table: 2 }));
    expect(second.rows).toEqual([['9'], ['8']]);
    const err = await failure(openCatalog(path, { table: 3 }));
    expect((err as InputError).message).toMatch(/holds 2 TABLEs, so there is no TABLE 3/);
  });

  it('matches elements by local name, so a namespace prefix reads the same', async () => {
    const r = await collect(await openCatalog(tmp.write('prefixed.xml', votable([TABLE], { prefix: 'vot' }).join(''))));
    expectValues(r.rows, true);
  });

  it('leaves out FIELDs it cannot use with a note, keeping the BINARY2 layout right', async () => {
    const cols: VoColumn[] = [
      { name: 'a', type: 'double', values: [1, 2] },
      { name: 'c', type: 'double', datatype: 'floatComplex', values: [null, null] },
      { name: 'v', type: 'double', datatype: 'double', arraysize: '3', values: [null, null] },
      { name: 'b', type: 'int32', values: [5, 6] },
    ];
    const text = votable([{ columns: cols }], { encoding: 'binary2' }).join('');
    const r = await collect(await openCatalog(tmp.write('skip.vot', text)));
    expect(r.columns).toEqual(['a', 'b']);
    expect(r.rows).toEqual([
      [1, 5],
      [2, 6],
    ]);
    expect(r.notes.join('\n')).toMatch(/`c` \(datatype floatComplex\) is not read: unsupported column type, complex numbers/);
    expect(r.notes.join('\n')).toMatch(/`v` \(datatype double, arraysize 3\) is not read: unsupported column type, arrays of values/);
  });

  it('reports a TR with too few or too many TD cells as a malformed record, with its line', async () => {
    const text = votable([{ columns: [{ name: 'a', type: 'double', values: [1, 2, 3] }, { name: 'b', type: 'double', values: [4, 5, 6] }] }])
      .join('')
      .replace('<TR><TD>2</TD><TD>5</TD></TR>', '<TR><TD>2</TD></TR>')
      .replace('<TR><TD>3</TD><TD>6</TD></TR>', '<TR><TD>3</TD><TD>6</TD><TD>7</TD></TR>');
    const r = await collect(await openCatalog(tmp.write('ragged.vot', text)));
    expect(r.rows).toEqual([
      ['1', '4'],
      ['2', null],
      ['3', '6'],
    ]);
    expect(r.malformed.map((m) => m.row)).toEqual([2, 3]);
    expect(r.malformed[0].message).toMatch(/line \d+: the row has 1 TD cell, the table 2 FIELDs/);
    expect(r.malformed[1].message).toMatch(/the extra 1 were dropped/);
  });

  it('gives the same rows read in tiny chunks and through gzip', async () => {
    const n = 500;
    const cols: VoColumn[] = [
      { name: 'i', type: 'int32', values: Array.from({ length: n }, (_, i) => i) },
      { name: 's', type: 'string', values: Array.from({ length: n }, (_, i) => (i % 5 === 0 ? null : `é-${i}`)) },
    ];
    for (const encoding of ['tabledata', 'binary2'] as const) {
      const text = votable([{ columns: cols }], { encoding }).join('');
      const whole = await collect(await openCatalog(tmp.write(`n-${encoding}.vot`, text)));
      const tiny = await collect(await openCatalog(tmp.write(`n2-${encoding}.vot`, text), { readChunkBytes: 7, batchSize: 64 }));
      const gz = await collect(await openCatalog(tmp.write(`n-${encoding}.vot.gz`, gzipSync(text)), { batchSize: 100 }));
      expect(whole.rows.length).toBe(n);
      expect(tiny.rows).toEqual(whole.rows);
      expect(gz.rows).toEqual(whole.rows);
    }
  });

  describe('damaged documents are InputErrors with line and column', () => {
    const good = votable([{ columns: [{ name: 'a', type: 'double', values: [1, 2, 3, 4, 5, 6] }] }], { encoding: 'binary2', lineWidth: 8 }).join('');
    const td = votable([{ columns: [{ name: 'a', type: 'double', values: [1, 2] }] }]).join('');
    const cases: [string, string, RegExp, RegExp][] = [
      ['bad base64', good.replace(/(<STREAM encoding="base64">\n)(....)/, '$1!$2'), /line \d+: the STREAM is not valid base64 \(character "!"\)/, /^line \d+$/],
      // Rows are 1 flag byte + 8 bytes; 16 base64 characters are 12 bytes: row 1 and part of row 2.
      ['a truncated BINARY2 stream', cutStream(good, 16), /binary data end inside row 2 \(3 bytes of an incomplete row\)/, /line \d+, column \d+/],
      ['base64 whose length is not a multiple of 4', cutStream(good, 15), /ends with 3 stray characters/, /line \d+, column \d+/],
      ['mismatched tags', td.replace('</TD></TR>', '</TX></TR>'), /not well-formed XML: unexpected close tag/, /line \d+, column \d+/],
      ['a document cut short', td.slice(0, td.indexOf('</TABLEDATA>')), /not well-formed XML: unclosed tag/, /line \d+, column \d+/],
      ['another root element', '<?xml version="1.0"?>\n<VOTABLES><TABLE/></VOTABLES>\n', /root element is <VOTABLES>, not <VOTABLE>/, /line 2/],
      ['a remote stream', good.replace('<STREAM encoding="base64">', '<STREAM href="http://example.org/x.bin">'), /remote STREAM/, /line/],
      ['an unknown datatype', td.replace('datatype="double"', 'datatype="real"'), /datatype "real", which VOTable does not define/, /line/],
    ];
    damagedFileCases(tmp, '.vot', cases);
  });
});

describe.skipIf(!hasShared)('the real sdb VOTable (../shared/reference-data/life-nearby-stars)', () => {
  if (!hasShared) it.skip(SKIP_SHARED, () => {});

  it('reads 149 rows of 60 FIELDs with no units and literal None cells, and says so', async () => {
    const r = await collect(await openCatalog(join(REFERENCE, 'life-nearby-stars/sdb_30pc_09_02_2024.xml')));
    // PROVENANCE.md: 149 rows, 60 FIELDs, no unit attributes, 862 cells of the text `None`.
    expect(r.columns.length).toBe(60);
    expect(r.stats.rows).toBe(149);
    const notes = r.notes.join('\n');
    expect(notes).toMatch(/no FIELD declares a unit/);
    expect(notes).toMatch(/862 cells hold a word such as `None`/);
    // HD 166 (the first row): plx_value 72.5764 mas, plx_arcsec 0.0725764 (PROVENANCE.md: equal up to 1000).
    const plx = r.columns.indexOf('plx_value');
    const arcsec = r.columns.indexOf('plx_arcsec');
    expect(Number(r.rows[0][plx])).toBeCloseTo(1000 * Number(r.rows[0][arcsec]), 6);
  });
});
