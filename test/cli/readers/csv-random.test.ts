/**
 * Random well-formed and ragged CSV, checked against a small independent parser that walks the
 * text one character at a time. It pins down the one thing papaparse does not give us, the
 * physical line each record starts on, with chunk boundaries and batch edges in random places.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { openCsv } from '../../../cli/readers/csv.js';
import { collect, TempDir } from './helpers.js';
import { rng } from '../../helpers/rng.js';

const tmp = new TempDir();
afterAll(() => tmp.remove());


function makeCsv(rand: () => number, delimiter: string): string {
  const pick = <T>(xs: T[]): T => xs[Math.floor(rand() * xs.length)];
  const eol = () => (rand() < 0.5 ? '\n' : '\r\n');
  const ncols = 1 + Math.floor(rand() * 5);
  const plain = () => pick(['', '1', '2.5', '-3e4', 'abc', 'a b', 'x#y', 'é☉', ' ', 'NaN']);
  const quoted = () => {
    const parts = [pick(['', 'q', 'with' + delimiter + 'delim', 'say ""hi""', '#hash']), pick(['', '\n', '\r\n', '\n\n'])];
    return `"${parts.join(rand() < 0.5 ? 'mid' : '')}${pick(['', 'end'])}"`;
  };
  let out = rand() < 0.3 ? '\ufeff' : '';
  const comments = Math.floor(rand() * 4);
  for (let i = 0; i < comments; i++) out += `# comment ${i}` + eol();
  out += Array.from({ length: ncols }, (_, i) => `c${i}`).join(delimiter) + eol();
  const records = Math.floor(rand() * 40);
  for (let r = 0; r < records; r++) {
    const kind = rand();
    if (kind < 0.08) {
      out += eol();
      continue;
    }
    if (kind < 0.14) {
      out += '#' + plain() + eol();
      continue;
    }
    let width = ncols;
    if (kind > 0.9) width = Math.max(1, ncols + pick([-2, -1, 1, 2]));
    const fields: string[] = [];
    for (let c = 0; c < width; c++) {
      let f = rand() < 0.3 ? quoted() : plain();
      if (c === 0 && f.startsWith('#')) f = 'z' + f;
      fields.push(f);
    }
    out += fields.join(delimiter);
    if (r < records - 1 || rand() < 0.7) out += eol();
  }
  return out;
}

interface Expected {
  header: string[];
  rows: (string | null)[][];
  lines: number[];
  /** Data rows (1-based) whose field count differs from the header's. */
  ragged: number[];
}

/** A deliberately naive reading of the same rules the reader documents. */
function reference(raw: string, delimiter: string): Expected {
  let text = raw.startsWith('\ufeff') ? raw.slice(1) : raw;
  text = text.replace(/\r\n?/g, '\n');
  let i = 0;
  let line = 1;
  const records: { fields: string[]; line: number }[] = [];
  while (i < text.length) {
    const start = line;
    if (text[i] === '#') {
      while (i < text.length && text[i] !== '\n') i++;
      i++;
      line++;
      continue;
    }
    const fields: string[] = [];
    for (;;) {
      let value = '';
      if (text[i] === '"') {
        i++;
        for (;;) {
          if (text[i] === '"' && text[i + 1] === '"') {
            value += '"';
            i += 2;
          } else if (text[i] === '"') {
            i++;
            break;
          } else {
            if (text[i] === '\n') line++;
            value += text[i++];
          }
        }
      } else {
        while (i < text.length && text[i] !== '\n' && !text.startsWith(delimiter, i)) value += text[i++];
      }
      fields.push(value);
      if (text.startsWith(delimiter, i)) {
        i += delimiter.length;
        continue;
      }
      break;
    }
    i++; // the newline (or past the end)
    line++;
    const blank = fields.length === 1 && fields[0].trim() === '';
    if (!blank) records.push({ fields, line: start });
  }
  const [header, ...data] = records;
  const n = header.fields.length;
  return {
    header: header.fields,
    rows: data.map((r) => Array.from({ length: n }, (_, c) => (c < r.fields.length ? r.fields[c] : null))),
    lines: data.map((r) => r.line),
    ragged: data.flatMap((r, k) => (r.fields.length === n ? [] : [k + 1])),
  };
}

describe('openCsv against a reference parser', () => {
  it('agrees on cells and line numbers for 300 random files', async () => {
    for (let seed = 1; seed <= 300; seed++) {
      const rand = rng(seed);
      const delimiter = [',', '\t', ';', '|'][seed % 4];
      const text = makeCsv(rand, delimiter);
      const expected = reference(text, delimiter);
      const file = tmp.write(`r${seed}.csv`, text);
      const readChunkBytes = 1 + Math.floor(rand() * 40);
      const batchSize = 1 + Math.floor(rand() * 9);
      const r = await collect(await openCsv(file, { readChunkBytes, batchSize, delimiter }));
      const context = `seed ${seed} (chunk ${readChunkBytes}, batch ${batchSize}): ${JSON.stringify(text)}`;
      expect(r.columns, context).toEqual(expected.header);
      expect(r.rows, context).toEqual(expected.rows);
      expect(r.lines, context).toEqual(expected.lines);
      expect(r.stats.records, context).toBe(expected.rows.length);
      expect(r.stats.unparseable, context).toBe(0);
      expect(r.malformed.map((m) => m.row), context).toEqual(expected.ragged);
      expect(r.malformed.map((m) => m.line), context).toEqual(expected.ragged.map((row) => expected.lines[row - 1]));
    }
  });
});
