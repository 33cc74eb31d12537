/** The steps of checking one input that the single-thread run and the worker threads share. */
import { isNumericQuantity, type Quantity } from '../../rules/engine/quantities.js';
import type { Batch, Rule } from '../../rules/engine/types.js';
import { InputRun, type RuleSelection } from '../../rules/engine/runner.js';
import { MemorySpill } from '../../rules/engine/spill.js';
import { csvLayout, type CsvLayout } from '../readers/byte-range.js';
import { bindColumns } from '../binding/bind.js';
import { toBatch } from '../binding/to-batch.js';
import { SAMPLE_FACTS } from '../../rules/checks/index.js';
import { columnWritesDecimalComma } from '../binding/cells.js';
import type { Binding, BindOptions } from '../binding/types.js';
import { openCatalog } from '../readers/open.js';
import { canSelectColumns } from '../readers/projection.js';
import type { CatalogReader, RawBatch, RawColumn, ReaderStats } from '../readers/types.js';
import type { ReaderSettings } from '../parallel/protocol.js';
import type { InputSummary } from '../reports/terminal.js';

export function openInput(path: string, s: ReaderSettings): Promise<CatalogReader> {
  return openCatalog(path, { format: s.format, delimiter: s.delimiter, batchSize: s.batchSize, hdu: s.hdu, table: s.table });
}

/** Rows the binder looks at, whatever the batch size, so the binding does not depend on it. */
export const SAMPLE_ROWS = 16384;

/**
 * Binds the columns from the first SAMPLE_ROWS rows (read ahead over as many batches as that
 * takes), and tells the reader which columns it may skip from then on. Returns the batches read
 * ahead, to be checked first, and the iterator for the rest.
 */
export async function bindFromFirstBatch(reader: CatalogReader, bind: BindOptions, input = 0) {
  const it = reader.batches()[Symbol.asyncIterator]();
  const ahead: RawBatch[] = [];
  let rows = 0;
  while (rows < SAMPLE_ROWS) {
    const r = await it.next();
    if (r.done) break;
    ahead.push(r.value);
    rows += r.value.length;
  }
  const sample = sampleOf(ahead);
  const binding = bindColumns(reader.columns, sample, bind);
  if (sample) {
    binding.decimalCommas = binding.columns
      .filter((b) => isNumericQuantity(b.quantity))
      .flatMap((b) => [b.columnIndex, ...b.errors.map((e) => e.columnIndex)])
      .filter((i) => columnWritesDecimalComma(sample.columns[i]));
  }
  // The sample as a batch, for the rules that judge against the whole column (RunContext.sample).
  let sampleBatch: Batch | undefined;
  if (sample) {
    const batch = toBatch(sample, binding, input);
    binding.facts = Object.fromEntries(SAMPLE_FACTS.map((f) => [f.name, f.measure(batch)]));
    sampleBatch = { ...batch, facts: binding.facts };
  }
  selectBound(reader, binding);
  return { it, ahead, binding, sample, sampleBatch };
}

/**
 * Readers that decode column by column (Parquet, FITS) may skip what no rule reads, and the CSV
 * reader reads the numeric columns straight into numbers.
 */
export function selectBound(reader: CatalogReader, binding: Binding): void {
  if (canSelectColumns(reader)) {
    const text = binding.columns.filter((b) => !isNumericQuantity(b.quantity)).map((b) => b.columnIndex);
    reader.selectColumns(boundColumns(binding), text);
  }
}

/** The first SAMPLE_ROWS rows as one raw batch (the read-ahead batches joined), or null for none. */
function sampleOf(batches: RawBatch[]): RawBatch | null {
  if (batches.length === 0) return null;
  if (batches.length === 1) return batches[0];
  const first = batches[0];
  const columns: RawColumn[] = first.columns.map((_, c) => {
    const parts = batches.map((b) => b.columns[c]);
    if (parts.every((p) => p.kind === 'text')) return { kind: 'text', values: parts.flatMap((p) => (p as { values: (string | null)[] }).values) };
    if (parts.every((p) => p.kind === 'number')) {
      const n = parts.reduce((a, p) => a + p.values.length, 0);
      const values = new Float64Array(n);
      const nulls = parts.some((p) => (p as { nulls: Uint8Array | null }).nulls) ? new Uint8Array(n) : null;
      let at = 0;
      for (const p of parts as { values: Float64Array; nulls: Uint8Array | null }[]) {
        values.set(p.values, at);
        if (nulls && p.nulls) nulls.set(p.nulls, at);
        at += p.values.length;
      }
      return { kind: 'number', values, nulls };
    }
    // Mixed kinds do not occur before the binding; the first batch alone stands for the column.
    return parts[0];
  });
  const length = batches.reduce((a, b) => a + b.length, 0);
  const lines = first.lines ? new Int32Array(length) : null;
  const malformed: RawBatch['malformed'] = [];
  let at = 0;
  for (const b of batches) {
    if (lines && b.lines) lines.set(b.lines, at);
    for (const m of b.malformed) malformed.push(m.index < 0 ? m : { ...m, index: m.index + at });
    at += b.length;
  }
  return { length, firstRow: first.firstRow, lines, columns, malformed };
}

/** Indices of every column the binding reads: values, their uncertainties, and text columns. */
export function boundColumns(binding: Binding): number[] {
  return binding.columns.flatMap((b) => [b.columnIndex, ...b.errors.map((e) => e.columnIndex)]);
}

export function boundMap(binding: Binding): Map<Quantity, { column: string; unit: string }> {
  const bound = new Map<Quantity, { column: string; unit: string }>();
  for (const b of binding.columns) bound.set(b.quantity, { column: b.column, unit: b.unit });
  return bound;
}

export function inputSummary(
  index: number,
  path: string,
  format: string,
  stats: ReaderStats,
  readerNotes: readonly string[],
  binding: Binding,
  rowsWithFindings: number,
): InputSummary {
  return {
    index,
    path,
    format,
    records: stats.records,
    rows: stats.rows,
    unparseableRecords: stats.unparseable,
    rowsWithFindings,
    bound: binding.columns.map((b) => ({ quantity: b.quantity, column: b.column, unit: b.unit })),
    notes: [...readerNotes, ...binding.notes],
  };
}

export interface SplitPlan {
  layout: CsvLayout;
  binding: Binding;
  sample: Batch | undefined;
}

/**
 * What checking one input in byte ranges needs (threads, shards of one file): the binding and the
 * sample from its first rows, and where its data starts; null when it cannot be cut (not a plain
 * UTF-8 CSV file, or a selected rule that cannot save its state).
 */
export async function planSplit(
  path: string,
  s: ReaderSettings & { rules: readonly Rule[]; selection: RuleSelection; bind: BindOptions },
  input: number,
): Promise<SplitPlan | null> {
  if (path === '-') return null;
  const reader = await openInput(path, s);
  let binding: Binding;
  let sample: Batch | undefined;
  let layout: CsvLayout | null;
  try {
    ({ binding, sampleBatch: sample } = await bindFromFirstBatch(reader, s.bind, input));
    layout = await csvLayout(reader);
  } finally {
    await reader.close();
  }
  if (!layout) return null;
  const probe = new InputRun(s.rules, s.selection, boundMap(binding), { push: () => undefined }, undefined, undefined, new MemorySpill());
  return probe.splittable() ? { layout, binding, sample } : null;
}
