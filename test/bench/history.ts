/**
 * test-output/bench.json: the latest run in full, and per row count the latest peak RSS of each
 * measurement, so the 1M/10M memory comparison works across separate runs.
 */
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { dirname } from 'node:path';

export interface RssEntry {
  peakRssMb: number;
  date: string;
}

export interface RowsEntry<R> {
  /** The last full record made at this row count. */
  lastRun: R;
  /** Per measurement key, the most recent peak RSS at this row count (from whichever run measured it). */
  peakRssMb: Record<string, RssEntry>;
}

export interface BenchFile<R> {
  schemaVersion: 1;
  latest: R;
  byRows: Record<string, RowsEntry<R>>;
}

export function readHistory<R>(path: string): BenchFile<R> | null {
  if (!existsSync(path)) return null;
  try {
    const j = JSON.parse(readFileSync(path, 'utf8')) as Partial<BenchFile<R>>;
    return j.schemaVersion === 1 && j.byRows ? (j as BenchFile<R>) : null;
  } catch {
    return null;
  }
}

/** Peak RSS per key at a row count, from the history merged with this run's numbers. */
export function rssAt<R>(history: BenchFile<R> | null, rows: number): Record<string, number> | undefined {
  const e = history?.byRows[String(rows)];
  if (!e) return undefined;
  return Object.fromEntries(Object.entries(e.peakRssMb).map(([k, v]) => [k, v.peakRssMb]));
}

export function mergeRun<R>(history: BenchFile<R> | null, rows: number, record: R, rss: Record<string, number>, date: string): BenchFile<R> {
  const byRows = { ...(history?.byRows ?? {}) };
  const prev = byRows[String(rows)];
  const peak: Record<string, RssEntry> = { ...(prev?.peakRssMb ?? {}) };
  for (const [k, mb] of Object.entries(rss)) peak[k] = { peakRssMb: mb, date };
  byRows[String(rows)] = { lastRun: record, peakRssMb: peak };
  return { schemaVersion: 1, latest: record, byRows };
}

export function writeHistory<R>(path: string, file: BenchFile<R>): void {
  mkdirSync(dirname(path), { recursive: true });
  writeFileSync(path, JSON.stringify(file, null, 2) + '\n');
}
