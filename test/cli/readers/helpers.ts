/**
 * Fixture and collection helpers for the reader tests. Batches are flattened back into rows so
 * that results read with different batch sizes can be compared directly.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { expect, it } from 'vitest';
import { openCatalog } from '../../../cli/readers/open.js';
import { InputError, type CatalogReader, type RawBatch } from '../../../cli/readers/types.js';

export interface Collected {
  columns: string[];
  /** Row-major cells; numbers from number columns, null for typed nulls and absent cells. */
  rows: (string | number | null)[][];
  lines: (number | null)[];
  /** Malformed records, with the data row (1-based) they became, or null if none. */
  malformed: { row: number | null; line: number | null; message: string }[];
  stats: { records: number; rows: number; unparseable: number };
  batchLengths: number[];
  notes: string[];
}

export async function collect(reader: CatalogReader): Promise<Collected> {
  const out: Collected = {
    columns: reader.columns.map((c) => c.name),
    rows: [],
    lines: [],
    malformed: [],
    stats: { records: 0, rows: 0, unparseable: 0 },
    batchLengths: [],
    notes: [],
  };
  let expectedFirst = 1;
  for await (const batch of reader.batches()) {
    checkShape(batch, reader.columns.length, expectedFirst);
    expectedFirst += batch.length;
    out.batchLengths.push(batch.length);
    for (let i = 0; i < batch.length; i++) {
      out.rows.push(
        batch.columns.map((col) => {
          if (col.kind === 'text') return col.values[i];
          if (col.kind === 'scanned') {
            const k = col.oddIndex.indexOf(i);
            return k === -1 ? col.values[i] : col.oddText[k];
          }
          return col.nulls !== null && col.nulls[i] === 1 ? null : col.values[i];
        }),
      );
      out.lines.push(batch.lines === null ? null : batch.lines[i]);
    }
    for (const m of batch.malformed) {
      out.malformed.push({ row: m.index < 0 ? null : batch.firstRow + m.index, line: m.line, message: m.message });
    }
  }
  await reader.close();
  out.stats = { ...reader.stats };
  out.notes = [...(reader.notes ?? [])];
  return out;
}

function checkShape(batch: RawBatch, ncols: number, expectedFirst: number): void {
  const problems: string[] = [];
  if (batch.firstRow !== expectedFirst) problems.push(`firstRow ${batch.firstRow}, expected ${expectedFirst}`);
  if (batch.columns.length !== ncols) problems.push(`${batch.columns.length} columns, expected ${ncols}`);
  for (const col of batch.columns) {
    if (col.values.length !== batch.length) problems.push(`a column has ${col.values.length} values for ${batch.length} rows`);
    if (col.kind === 'number' && col.nulls !== null && col.nulls.length !== batch.length) problems.push('nulls length');
  }
  if (batch.lines !== null && batch.lines.length !== batch.length) problems.push('lines length');
  for (const m of batch.malformed) if (m.index >= batch.length) problems.push(`malformed index ${m.index}`);
  if (problems.length > 0) throw new Error(`bad batch: ${problems.join('; ')}`);
}

export class TempDir {
  readonly dir = mkdtempSync(join(tmpdir(), 'starsieve-readers-'));
  write(name: string, content: string | Uint8Array): string {
    const path = join(this.dir, name);
    writeFileSync(path, content);
    return path;
  }
  remove(): void {
    rmSync(this.dir, { recursive: true, force: true });
  }
}

/** Rejection reason of a promise, or a failure if it resolves. */
export async function failure(p: Promise<unknown>): Promise<unknown> {
  try {
    await p;
  } catch (err) {
    return err;
  }
  throw new Error('expected a failure, but the call succeeded');
}

/**
 * One test per damaged file: opening and reading it must fail with an InputError whose message
 * and position match. Cases are [what, file content, message, position].
 */
export function damagedFileCases(tmp: TempDir, ext: string, cases: readonly (readonly [string, string | Uint8Array, RegExp, RegExp])[]): void {
  for (const [what, content, message, position] of cases) {
    it(what, async () => {
      const err = await failure(openCatalog(tmp.write(`bad-${what.replace(/\W+/g, '-')}${ext}`, content)).then(collect));
      expect(err).toBeInstanceOf(InputError);
      expect((err as InputError).message).toMatch(message);
      expect((err as InputError).position).toMatch(position);
    });
  }
}
