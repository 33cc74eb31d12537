/**
 * Builders for binder tests: column metadata and raw batches from plain arrays, and the real
 * reference catalogs read with papaparse (so these tests do not depend on the project's readers).
 */
import { existsSync, readFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import Papa from 'papaparse';
import type { ColumnMeta, RawBatch, RawColumn } from '../../../cli/readers/types.js';

export const REFERENCE = resolve(import.meta.dirname, '../../../../shared/reference-data');

/** Test-name suffix when the shared reference data is not there (a fresh clone). */
export function needs(rel: string): { present: boolean; label: string } {
  const present = existsSync(join(REFERENCE, rel));
  return { present, label: present ? '' : ` [skipped: ../shared/reference-data/${rel} is absent]` };
}

export function meta(names: readonly string[], extra: Record<string, Partial<ColumnMeta>> = {}): ColumnMeta[] {
  return names.map((name) => ({ name, unit: null, ucd: null, description: null, type: 'text', ...extra[name] }));
}

/** A raw text batch from columns of cells; numbers are written with String(). */
export function textBatch(columns: Record<string, readonly (string | number | null)[]>): { meta: ColumnMeta[]; raw: RawBatch } {
  const names = Object.keys(columns);
  const length = Math.max(0, ...names.map((n) => columns[n].length));
  const cols: RawColumn[] = names.map((n) => ({
    kind: 'text',
    values: columns[n].map((v) => (v === null ? null : typeof v === 'number' ? String(v) : v)),
  }));
  return { meta: meta(names), raw: { length, firstRow: 1, lines: null, columns: cols, malformed: [] } };
}

/** Only the header line of a reference CSV (after any `#` comment lines). */
export function headerOf(rel: string): string[] {
  const text = readFileSync(join(REFERENCE, rel), 'utf8');
  const line = text.split(/\r?\n/).find((l) => !l.startsWith('#') && l.trim() !== '') ?? '';
  return (Papa.parse<string[]>(line, { header: false }).data[0] ?? []).map((h) => h.trim());
}

/** A reference CSV as metadata plus one raw batch of its first `maxRows` rows. */
export function readReference(rel: string, maxRows = 65536): { meta: ColumnMeta[]; raw: RawBatch } {
  const text = readFileSync(join(REFERENCE, rel), 'utf8');
  const parsed = Papa.parse<string[]>(text, { header: false, comments: '#', skipEmptyLines: true });
  const [head, ...rows] = parsed.data;
  const names = head.map((h) => h.trim());
  const body = rows.slice(0, maxRows);
  const columns: RawColumn[] = names.map((_, j) => ({ kind: 'text', values: body.map((r) => (j < r.length ? r[j] : null)) }));
  return { meta: meta(names), raw: { length: body.length, firstRow: 1, lines: null, columns, malformed: [] } };
}
