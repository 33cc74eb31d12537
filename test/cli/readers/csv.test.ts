import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { detectDelimiter, openCsv, type CsvOptions } from '../../../cli/readers/csv.js';
import { InputError } from '../../../cli/readers/types.js';
import { collect, failure, TempDir, type Collected } from './helpers.js';

const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..');
const tmp = new TempDir();
afterAll(() => tmp.remove());

let fileNo = 0;
async function read(content: string, options: CsvOptions = {}, ext = '.csv'): Promise<Collected> {
  const file = tmp.write(`f${fileNo++}${ext}`, content);
  return collect(await openCsv(file, options));
}

function expectBalanced(r: Collected): void {
  expect(r.stats.records).toBe(r.stats.rows + r.stats.unparseable);
  expect(r.stats.rows).toBe(r.rows.length);
  expect(r.malformed.filter((m) => m.row === null).length).toBe(r.stats.unparseable);
}

describe('openCsv: header, comments and line numbers', () => {
  it('finds the header after leading comment lines and numbers rows by physical line', async () => {
    const r = await read(
      ['# produced by the archive', '# COLUMN ra: right ascension [deg]', '#', 'name,ra,dec', 'Alpha,10.5,-3.2', 'Beta,,4.0', ''].join('\n'),
    );
    expect(r.columns).toEqual(['name', 'ra', 'dec']);
    expect(r.rows).toEqual([
      ['Alpha', '10.5', '-3.2'],
      ['Beta', '', '4.0'], // an empty cell stays "" for the binder to call missing
    ]);
    expect(r.lines).toEqual([5, 6]);
    expect(r.malformed).toEqual([]);
    expect(r.stats).toEqual({ records: 2, rows: 2, unparseable: 0 });
  });

  it('skips comment lines inside the data but not a # inside a quoted field', async () => {
    const r = await read('a,b\n1,"x\n#not a comment",2\n# real comment\n3,4\n#trailing\n');
    expect(r.rows).toEqual([
      ['1', 'x\n#not a comment'],
      ['3', '4'],
    ]);
    expect(r.malformed).toEqual([
      { row: 1, line: 2, message: 'line 2: 3 fields, header has 2; the extra 1 were dropped' },
    ]);
    expect(r.lines).toEqual([2, 5]);
  });

  it('strips a UTF-8 BOM and handles CRLF', async () => {
    const r = await read('\ufeffid,mag\r\n1,5.5\r\n2,"6.1"\r\n');
    expect(r.columns).toEqual(['id', 'mag']);
    expect(r.rows).toEqual([
      ['1', '5.5'],
      ['2', '6.1'],
    ]);
    expect(r.lines).toEqual([2, 3]);
  });

  it('handles a BOM in front of comment lines, and lone CR line ends', async () => {
    const r = await read('\ufeff# note\rx,y\r1,2\r3,4\r');
    expect(r.columns).toEqual(['x', 'y']);
    expect(r.lines).toEqual([3, 4]);
  });

  it('reads a last line without a newline', async () => {
    const r = await read('a,b\n1,2\n3,4');
    expect(r.rows).toEqual([
      ['1', '2'],
      ['3', '4'],
    ]);
    expect(r.lines).toEqual([2, 3]);
  });

  it('delivers nothing for a header-only file', async () => {
    const r = await read('a,b,c\n');
    expect(r.columns).toEqual(['a', 'b', 'c']);
    expect(r.rows).toEqual([]);
    expect(r.stats).toEqual({ records: 0, rows: 0, unparseable: 0 });
  });
});

describe('openCsv: quoting', () => {
  it('reads embedded delimiters, doubled quotes and newlines inside quotes', async () => {
    const r = await read(
      ['id,name,note', '1,"Smith, J.",plain', '2,"say ""hi""",x', '3,"two', 'lines",y', '4,z,"a,b,""c"""', ''].join('\n'),
    );
    expect(r.rows).toEqual([
      ['1', 'Smith, J.', 'plain'],
      ['2', 'say "hi"', 'x'],
      ['3', 'two\nlines', 'y'],
      ['4', 'z', 'a,b,"c"'],
    ]);
    expect(r.lines).toEqual([2, 3, 4, 6]);
    expect(r.malformed).toEqual([]);
  });

  it('keeps counting lines correctly after a quoted field with CRLF newlines inside', async () => {
    const r = await read('a,b\r\n"x\r\ny\r\nz",1\r\n2,3\r\n');
    expect(r.rows).toEqual([
      ['x\ny\nz', '1'],
      ['2', '3'],
    ]);
    expect(r.lines).toEqual([2, 5]);
  });

  it('reports an unterminated quote on the last line and counts it', async () => {
    const r = await read('a,b\n1,2\n3,"4\n');
    expect(r.rows).toEqual([['1', '2']]);
    expect(r.stats).toEqual({ records: 2, rows: 1, unparseable: 1 });
    expect(r.malformed).toHaveLength(1);
    expect(r.malformed[0].row).toBeNull();
    expect(r.malformed[0].line).toBe(3);
    expect(r.malformed[0].message).toMatch(/^line 3: .*never closed/);
    expectBalanced(r);
  });

  it('recovers after an unterminated quote in the middle: the following lines are still records', async () => {
    const r = await read('a,b\n1,2\n3,"4\n5,6\n# comment\n7,8\n');
    expect(r.rows).toEqual([
      ['1', '2'],
      ['5', '6'],
      ['7', '8'],
    ]);
    expect(r.lines).toEqual([2, 4, 6]);
    expect(r.malformed.map((m) => [m.row, m.line])).toEqual([[null, 3]]);
    expect(r.stats).toEqual({ records: 4, rows: 3, unparseable: 1 });
  });

  it('reports the true line of an unterminated record that follows comment lines', async () => {
    const r = await read('a,b\n1,2\n# c1\n# c2\n3,"4\n');
    expect(r.malformed.map((m) => m.line)).toEqual([5]);
  });

  it('keeps memory bounded: a quote left open for longer than the cap breaks only its own line', async () => {
    const body: string[] = ['a,b', '1,2', '3,"never closed'];
    for (let i = 0; i < 400; i++) body.push(`${i},value number ${i}`);
    const r = await read(body.join('\n') + '\n', { maxRecordChars: 1024, readChunkBytes: 256 });
    expect(r.stats).toEqual({ records: 402, rows: 401, unparseable: 1 });
    expect(r.malformed.map((m) => [m.row, m.line])).toEqual([[null, 3]]);
    expect(r.lines[1]).toBe(4);
    expect(r.lines[400]).toBe(403);
    expect(r.rows[400]).toEqual(['399', 'value number 399']);
  });

  it('breaks an endless line without newlines into a malformed record instead of buffering it', async () => {
    const r = await read(`a,b\n1,2\n${'x'.repeat(5000)}\n3,4\n`, { maxRecordChars: 1024, readChunkBytes: 128 });
    expect(r.rows).toEqual([
      ['1', '2'],
      ['3', '4'],
    ]);
    expect(r.lines).toEqual([2, 4]);
    expect(r.malformed.map((m) => [m.row, m.line])).toEqual([[null, 3]]);
    expectBalanced(r);
  });

  it('flags text after a closing quote but still delivers the row', async () => {
    const r = await read('a,b,c\n1,"ab"c,"d"\n2,3,4\n');
    expect(r.stats.rows).toBe(2);
    expect(r.malformed.some((m) => m.row === 1 && m.line === 2 && /closing quote/.test(m.message))).toBe(true);
    expect(r.rows[1]).toEqual(['2', '3', '4']);
    expect(r.lines).toEqual([2, 3]);
  });
});

describe('openCsv: ragged rows and blank lines', () => {
  it('pads short rows with null and drops the extra fields of long rows, reporting both', async () => {
    const r = await read('a,b,c\n1,2,3\n4,5\n6,7,8,9\n10,11,12\n');
    expect(r.rows).toEqual([
      ['1', '2', '3'],
      ['4', '5', null],
      ['6', '7', '8'],
      ['10', '11', '12'],
    ]);
    expect(r.malformed).toEqual([
      { row: 2, line: 3, message: 'line 3: 2 fields, header has 3; the missing 1 are empty' },
      { row: 3, line: 4, message: 'line 4: 4 fields, header has 3; the extra 1 were dropped' },
    ]);
    expectBalanced(r);
  });

  it('skips blank and whitespace-only lines without shifting line numbers, and says so', async () => {
    const r = await read('a,b\n\n1,2\n   \n3,4\n\n');
    expect(r.rows).toEqual([
      ['1', '2'],
      ['3', '4'],
    ]);
    expect(r.lines).toEqual([3, 5]);
    expect(r.stats).toEqual({ records: 2, rows: 2, unparseable: 0 });
    expect(r.notes.some((n) => n.startsWith('3 blank lines') && n.includes('line 2'))).toBe(true);
  });

  it('does not count the final newline as a blank line', async () => {
    const r = await read('a,b\n1,2\n');
    expect(r.notes).toEqual([]);
  });

  it('treats a row of empty fields as a record, not a blank line', async () => {
    const r = await read('a,b,c\n,,\n1,2,3\n');
    expect(r.rows).toEqual([
      ['', '', ''],
      ['1', '2', '3'],
    ]);
  });
});

describe('openCsv: delimiters and column names', () => {
  it('detects tab from the header and reports tsv', async () => {
    const file = tmp.write('t.txt', 'id\tname\tmag\n1\tA, B\t5\n');
    const reader = await openCsv(file);
    expect(reader.format).toBe('tsv');
    const r = await collect(reader);
    expect(r.rows).toEqual([['1', 'A, B', '5']]);
  });

  it('detects semicolon and pipe', async () => {
    expect((await read('a;b;c\n1,5;2;3\n')).rows).toEqual([['1,5', '2', '3']]);
    expect((await read('a|b\n1|2\n')).rows).toEqual([['1', '2']]);
  });

  it('counts delimiters outside quotes only', () => {
    expect(detectDelimiter('"a;b;c";"d;e",f,g')).toBe(',');
    expect(detectDelimiter('"a,b,c";d;e')).toBe(';');
    expect(detectDelimiter('single')).toBe(',');
  });

  it('uses a delimiter given in the options', async () => {
    expect((await read('a;b,c\n1;2,3\n', { delimiter: ',' })).rows).toEqual([['1;2', '3']]);
    expect((await read('a b\tc\n1 2\t3\n', { delimiter: 'tab' })).columns).toEqual(['a b', 'c']);
  });

  it('rejects an unusable delimiter with an InputError', async () => {
    const file = tmp.write('bad-delim.csv', 'a,b\n');
    const err = await failure(openCsv(file, { delimiter: '"' }));
    expect(err).toBeInstanceOf(InputError);
  });

  it('trims names and renames empty and repeated ones, with notes', async () => {
    const file = tmp.write('names.csv', ' mass ,mass,,id,mass, mass_2 \n1,2,3,4,5,6\n');
    const reader = await openCsv(file);
    expect(reader.columns.map((c) => c.name)).toEqual(['mass', 'mass_3', 'column_3', 'id', 'mass_4', 'mass_2']);
    expect(reader.columns.every((c) => c.type === 'text' && c.unit === null && c.ucd === null)).toBe(true);
    expect(reader.notes).toEqual([
      "column 2 repeats the name 'mass' of column 1; it is called mass_3",
      'column 3 has no name in the header; it is called column_3',
      "column 5 repeats the name 'mass' of column 1; it is called mass_4",
    ]);
    await reader.close();
  });

  it('reads quoted header names, even one spanning two lines', async () => {
    const r = await read('"a,1","b\nsecond"\n1,2\n');
    expect(r.columns).toEqual(['a,1', 'b\nsecond']);
    expect(r.lines).toEqual([3]);
  });
});

describe('openCsv: errors', () => {
  it('gives an InputError for a missing file', async () => {
    const err = await failure(openCsv(path.join(tmp.dir, 'nope.csv')));
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).message).toMatch(/^cannot read .*nope\.csv: no such file or directory$/);
  });

  it('gives an InputError for an empty or comment-only file', async () => {
    for (const content of ['', '# only\n# comments\n\n']) {
      const file = tmp.write(`empty${fileNo++}.csv`, content);
      const err = await failure(openCsv(file));
      expect(err).toBeInstanceOf(InputError);
      expect((err as InputError).message).toMatch(/no header row/);
    }
  });

  it('gives an InputError for a header whose quote never closes', async () => {
    const err = await failure(openCsv(tmp.write('badhead.csv', 'a,"b\n1,2\n')));
    expect(err).toBeInstanceOf(InputError);
    expect((err as InputError).position).toBe('line 1');
  });
});

describe('openCsv: batching and chunking give the same result', () => {
  const lines = [
    '\ufeff# catalogue of invented stars',
    '# units: deg, deg, mag',
    'id,name,ra,dec,note',
    '1,Alpha,10.1,-5,plain',
    '2,"Beta, the second",20.2,6,"said ""hi"""',
    '',
    '3,Gamma,30.3,7,"two',
    'lines"',
    '# comment in the data',
    '4,Délta ☉,40.4',
    '5,Eps,50.5,8,x,extra',
    '6,Zeta,60.6,9,"multi',
    '',
    'blank line inside quotes"',
  ];
  for (let i = 7; i < 60; i++) lines.push(`${i},Star ${i},${i}.5,${-i},n${i}`);
  lines.push('99,"never closed,1,2,3');
  const text = lines.join('\r\n') + '\r\n';

  it('matches for batchSize 1, 7 and 16384', async () => {
    const results: Collected[] = [];
    for (const batchSize of [1, 7, 16384]) results.push(await read(text, { batchSize }));
    const [one, seven, big] = results;
    expect(one.batchLengths.every((n) => n <= 1)).toBe(true);
    expect(seven.batchLengths.every((n) => n <= 7)).toBe(true);
    for (const r of [seven, big]) {
      expect(r.rows).toEqual(one.rows);
      expect(r.lines).toEqual(one.lines);
      expect(r.malformed).toEqual(one.malformed);
      expect(r.stats).toEqual(one.stats);
    }
    expectBalanced(one);
    expect(one.stats).toEqual({ records: 60, rows: 59, unparseable: 1 });
    expect(one.lines.slice(0, 6)).toEqual([4, 5, 7, 10, 11, 12]);
    expect(one.rows[3]).toEqual(['4', 'Délta ☉', '40.4', null, null]);
    expect(one.rows[5][4]).toBe('multi\n\nblank line inside quotes');
    expect(one.lines[6]).toBe(15);
    expect(one.malformed.at(-1)).toMatchObject({ row: null, line: 68 });
  });

  it('matches when chunk boundaries fall anywhere (CRLF, quotes, multi-byte characters)', async () => {
    const reference = await read(text);
    for (const readChunkBytes of [1, 2, 3, 5, 64]) {
      const r = await read(text, { readChunkBytes, batchSize: 7 });
      expect(r.columns).toEqual(reference.columns);
      expect(r.rows).toEqual(reference.rows);
      expect(r.lines).toEqual(reference.lines);
      expect(r.malformed).toEqual(reference.malformed);
      expect(r.stats).toEqual(reference.stats);
    }
  });
});

describe('openCsv: standard input', () => {
  it("reads '-' from stdin", () => {
    const script = tmp.write(
      'stdin-probe.mts',
      `import { openCsv } from ${JSON.stringify(path.join(repoRoot, 'cli/readers/csv.ts'))};\n` +
        `const r = await openCsv('-');\nconst lines = [];\n` +
        `for await (const b of r.batches()) lines.push(...b.lines);\n` +
        `console.log(JSON.stringify({ path: r.path, stats: r.stats, lines, cols: r.columns.map((c) => c.name) }));\n`,
    );
    const run = spawnSync(process.execPath, ['--import', 'tsx', script], {
      input: '# c\na,b\n1,2\n3,4\n',
      cwd: repoRoot,
      encoding: 'utf8',
    });
    expect(run.stderr).toBe('');
    expect(JSON.parse(run.stdout)).toEqual({
      path: '-',
      stats: { records: 2, rows: 2, unparseable: 0 },
      lines: [3, 4],
      cols: ['a', 'b'],
    });
  });
});

describe('openCsv: NASA Exoplanet Archive composite table', () => {
  const nasa = path.resolve(repoRoot, '../shared/reference-data/nasa-exoplanet-archive/PSCompPars_2024-10-15.csv');
  it.skipIf(!existsSync(nasa))(
    `reads all 5766 rows after the comment block (skipped when ${nasa} is absent)`,
    async () => {
      const r = await collect(await openCsv(nasa));
      expect(r.stats).toEqual({ records: 5766, rows: 5766, unparseable: 0 });
      expect(r.columns).toHaveLength(84);
      expect(r.columns.slice(0, 3)).toEqual(['pl_name', 'hostname', 'sy_snum']);
      expect(r.columns).toContain('st_teff');
      expect(r.malformed).toEqual([]);
      // 88 comment lines, the header on line 89, so the first planet is on line 90.
      expect(r.lines[0]).toBe(90);
      expect(r.lines[5765]).toBe(5855);
      expect(r.rows[0][0]).toBe('11 Com b');
    },
  );
});
