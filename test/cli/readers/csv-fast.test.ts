/**
 * The CSV fast path (numbers read straight from the text) against the papaparse path it stands in
 * for: on generated files with quotes, CRLF, blank and comment lines, empty cells, exponents and
 * odd numbers, both must give the same numbers, the same problems and the same line numbers.
 */
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { readNumbers, readText } from '../../../cli/binding/cells.js';
import { scanNumber } from '../../../cli/readers/csv-fast.js';
import { openCsv } from '../../../cli/readers/csv.js';
import type { InputProblem } from '../../../rules/engine/types.js';

const dir = mkdtempSync(join(tmpdir(), 'starsieve-fast-'));
let fileNo = 0;

interface Seen {
  rows: (number | string | null)[][];
  problems: string[];
  lines: number[];
  malformed: string[];
  stats: unknown;
  notes: string[];
}

/** Reads a file; `fast` switches to the fast path after the first batch, as the check command does. */
async function read(path: string, fast: boolean, batchSize: number, readChunkBytes: number): Promise<Seen> {
  const reader = await openCsv(path, { batchSize, readChunkBytes });
  const ncols = reader.columns.length;
  const seen: Seen = { rows: [], problems: [], lines: [], malformed: [], stats: null, notes: [] };
  let first = true;
  for await (const b of reader.batches()) {
    if (first && fast) {
      // Column 0 stays text (an identifier); the last column is not read at all.
      const numeric = [...Array(ncols).keys()].slice(1, Math.max(1, ncols - 1));
      (reader as unknown as { selectColumns(a: number[], t: number[]): void }).selectColumns(numeric, [0]);
    }
    first = false;
    const problems: InputProblem[] = [];
    const cols = b.columns.map((c, k) => {
      if (k === 0) return readText(c, b.length);
      if (k === ncols - 1 && ncols > 1) return null;
      const out = new Float64Array(b.length);
      readNumbers(c, `c${k}`, out, problems);
      return [...out];
    });
    for (let i = 0; i < b.length; i++) seen.rows.push(cols.map((c) => (c === null ? null : c[i])));
    for (const p of problems) seen.problems.push(`${b.firstRow + p.index}:${p.kind}:${p.message}`);
    seen.lines.push(...(b.lines ?? []));
    for (const m of b.malformed) seen.malformed.push(`${m.index < 0 ? -1 : b.firstRow + m.index}:${m.line}:${m.message}`);
  }
  seen.stats = { ...reader.stats };
  seen.notes = [...reader.notes!];
  return seen;
}

const numberText = fc.oneof(
  fc.double({ noNaN: false }).map((x) => String(x)),
  fc.integer({ min: -1e6, max: 1e6 }).map(String),
  fc.tuple(fc.integer({ min: -99999, max: 99999 }), fc.integer({ min: -30, max: 330 })).map(([m, e]) => `${m / 100}e${e}`),
  fc.tuple(fc.nat(999), fc.nat(99999)).map(([a, b]) => `${a}.${String(b).padStart(5, '0')}`),
  fc.constantFrom('', ' 1.5', '1.5 ', '+2', '-0', '.5', '5.', '.', '-', '1e', '1e+', 'inf', '-Infinity', 'NaN', 'nan', '--', '...', '1,23', '51,230', '1.0D+26', '0x1A', '12345678901234567890', '0.1234567890123456789', '1e-400', '1e400', '007', 'abc'),
);
const quotedText = fc.oneof(
  numberText.map((s) => `"${s}"`),
  fc.constantFrom('"a, b"', '"two\nlines"', '"say ""hi"""'),
);
const cell = fc.oneof({ weight: 8, arbitrary: numberText }, { weight: 1, arbitrary: quotedText });
const row = (width: number) => fc.array(cell, { minLength: Math.max(1, width - 1), maxLength: width + 1 }).map((cells) => cells.join(','));
const line = (width: number) =>
  fc.oneof({ weight: 12, arbitrary: row(width) }, { weight: 1, arbitrary: fc.constantFrom('', '# a comment', '   ') });

const csvFile = fc.integer({ min: 2, max: 6 }).chain((width) =>
  fc.record({
    width: fc.constant(width),
    lines: fc.array(line(width), { minLength: 0, maxLength: 60 }),
    eol: fc.constantFrom('\n', '\r\n', '\r'),
    finalEol: fc.boolean(),
  }),
);

describe('CSV fast path', () => {
  it('reads plain decimals to the same double as Number() (ECMA-262 StringToNumber)', () => {
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), (x) => {
        for (const s of [String(x), x.toExponential(), x.toPrecision(7), x.toFixed(Math.min(20, 3))]) {
          if (/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(s)) expect(Object.is(scanNumber(s, 0, s.length), Number(s))).toBe(true);
        }
      }),
      { numRuns: 3000 },
    );
    for (const s of ['0.1', '0.30000000000000004', '1e22', '1e23', '9007199254740993', '123456789012345.6', '4.35e-3', '-0', '+.5', '5.']) {
      expect(Object.is(scanNumber(s, 0, s.length), Number(s))).toBe(true);
    }
    for (const s of ['', '.', '-', '1e', 'e5', '1.2.3', ' 1', 'inf', '0x1A', '1,5']) expect(scanNumber(s, 0, s.length)).toBeNaN();
  });

  it('gives the same cells, problems, lines and counts as the papaparse path on generated CSV', async () => {
    await fc.assert(
      fc.asyncProperty(csvFile, fc.constantFrom(1, 3, 16), fc.constantFrom(1, 7, 64, 65536), async (f, batchSize, chunk) => {
        const header = Array.from({ length: f.width }, (_, k) => `c${k}`).join(',');
        const text = [header, ...f.lines].join(f.eol) + (f.finalEol ? f.eol : '');
        const path = join(dir, `f${fileNo++}.csv`);
        writeFileSync(path, text);
        const slow = await read(path, false, batchSize, chunk);
        const fast = await read(path, true, batchSize, chunk);
        expect(fast).toEqual(slow);
      }),
      { numRuns: 250 },
    );
  });
});
