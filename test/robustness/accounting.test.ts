/**
 * Row accounting: for every input, records seen = rows parsed + records not parseable, the rows
 * delivered in batches are exactly the rows counted, and every record that made no row is
 * reported. Checked on the whole broken-input corpus and on every real catalog in
 * ../shared/reference-data; for plain CSV without quotes the record count is also checked against
 * an independent count of the file's data lines. (The command line's summary states the same three
 * numbers: corpus.test.ts checks the identity there for every corpus file, and
 * test/e2e/reference-data.test.ts for the real catalogs.)
 */
import { readFileSync, readdirSync, rmSync, statSync } from 'node:fs';
import { extname, join, relative } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { InputError } from '../../cli/readers/types.js';
import { REFERENCE, SKIP_SHARED, hasShared, tempDir } from '../helpers/cli.js';
import { makeBroken } from './make-broken.js';
import { drainPath, type Drained } from './pipeline.js';

async function readOrRefuse(path: string): Promise<Drained | InputError> {
  try {
    return await drainPath(path);
  } catch (err) {
    if (err instanceof InputError) return err;
    throw err;
  }
}

function holds(d: Drained, what: string): void {
  expect(d.stats.records, `${what}: records = rows + unparseable`).toBe(d.stats.rows + d.stats.unparseable);
  expect(d.delivered, `${what}: rows delivered in batches`).toBe(d.stats.rows);
  expect(d.rows.length, `${what}: rows collected`).toBe(d.stats.rows);
}

/** Data lines of a plain CSV counted independently: not blank, not a comment, minus the header. */
function dataLines(text: string): number {
  const lines = text.split(/\r\n|\r|\n/).filter((l) => l.trim() !== '' && !l.startsWith('#'));
  return Math.max(0, lines.length - 1);
}

describe('row accounting on the broken-input corpus', () => {
  let dir = '';
  let paths = new Map<string, string>();
  beforeAll(async () => {
    dir = tempDir();
    paths = await makeBroken(dir, { large: true });
  }, 60_000);
  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it('adds up for every file that reads, and every record that made no row is reported with its line', async () => {
    let read = 0;
    for (const [name, path] of paths) {
      const d = await readOrRefuse(path);
      if (d instanceof InputError) continue;
      read++;
      holds(d, name);
      expect(d.rowless, `${name}: row-less records reported`).toBe(d.stats.unparseable);
      for (const m of d.malformed) if (m.row === null && /\.csv(\.gz)?$/.test(name)) expect(m.line, `${name}: ${m.message}`).toBeGreaterThanOrEqual(1);
    }
    expect(read).toBeGreaterThanOrEqual(12);
  }, 60_000);
});

/** Every file under the reference folder, PROVENANCE and INDEX notes left out. */
function referenceFiles(): string[] {
  const out: string[] = [];
  const walk = (d: string) => {
    for (const f of readdirSync(d)) {
      const p = join(d, f);
      if (statSync(p).isDirectory()) walk(p);
      else if (!/\.md$/i.test(f)) out.push(p);
    }
  };
  walk(REFERENCE);
  return out.sort();
}

describe.skipIf(!hasShared)('row accounting on the real catalogs (../shared/reference-data)', () => {
  if (!hasShared) it.skip(SKIP_SHARED, () => {});

  it('adds up for every catalog starsieve reads, and plain CSVs count exactly their data lines', async () => {
    const refused: string[] = [];
    let read = 0;
    for (const path of referenceFiles()) {
      const name = relative(REFERENCE, path);
      const d = await readOrRefuse(path);
      if (d instanceof InputError) {
        refused.push(`${name}: ${d.message}`);
        continue;
      }
      read++;
      holds(d, name);
      if (extname(path) === '.csv') {
        const text = readFileSync(path, 'utf8');
        if (!text.includes('"')) expect(d.stats.records, `${name}: data lines`).toBe(dataLines(text));
      }
    }
    // PROVENANCE.md of each folder lists these files; all the CSV, FITS and VOTable ones read.
    expect(read, `refused: ${refused.join('; ')}`).toBeGreaterThanOrEqual(16);
  }, 120_000);
});
