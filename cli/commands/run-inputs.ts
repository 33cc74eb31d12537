import type { Quantity } from '../../rules/engine/quantities.js';
import { InputRun, type RuleReport, type RuleSelection } from '../../rules/engine/runner.js';
import type { Batch, Finding, FindingSink, Rule } from '../../rules/engine/types.js';
import { bindColumns, toBatch } from '../binding/bind.js';
import type { Binding, BindOptions } from '../binding/types.js';
import { openCatalog } from '../readers/open.js';
import { canSelectColumns } from '../readers/projection.js';
import type { CatalogReader, RawBatch } from '../readers/types.js';
import type { InputSummary } from '../reports/terminal.js';

export interface RunInputsOptions {
  paths: readonly string[];
  rules: readonly Rule[];
  selection: RuleSelection;
  bind: BindOptions;
  format?: string;
  delimiter?: string;
  /** FITS: the HDU to read; VOTable: the TABLE (1-based). */
  hdu?: number;
  table?: number;
  batchSize?: number;
  sink: FindingSink;
  /** Called after each batch with rows read so far and, where the reader knows, how far it has got. */
  progress?: (path: string, rows: number, position: ReturnType<NonNullable<CatalogReader['progress']>> | null) => void;
  /** Called with each batch after the rules have run over it (plots). */
  observe?: (batch: Batch) => void;
}

export interface InputResult {
  summary: InputSummary;
  binding: Binding;
  rules: RuleReport[];
}

/** Counts distinct rows with findings per input; memory grows with findings, not with rows. */
class RowTally implements FindingSink {
  readonly rows = new Set<number>();
  constructor(private readonly next: FindingSink) {}
  push(f: Finding): void {
    if (f.row !== null) this.rows.add(f.row);
    this.next.push(f);
  }
}

async function bindFromFirstBatch(reader: CatalogReader, opts: RunInputsOptions) {
  const it = reader.batches()[Symbol.asyncIterator]();
  const first = await it.next();
  const sample: RawBatch | null = first.done ? null : first.value;
  const binding = bindColumns(reader.columns, sample, opts.bind);
  // Readers that decode column by column (Parquet, FITS) may now skip what no rule reads.
  if (canSelectColumns(reader)) reader.selectColumns(boundColumns(binding));
  return { it, sample, binding };
}

/** Indices of every column the binding reads: values and their uncertainties. */
export function boundColumns(binding: Binding): number[] {
  return binding.columns.flatMap((b) => [b.columnIndex, ...b.errors.map((e) => e.columnIndex)]);
}

/** Reads each input in turn, binds its columns, and streams its batches through the rules. */
export async function runInputs(opts: RunInputsOptions): Promise<InputResult[]> {
  const results: InputResult[] = [];
  for (let index = 0; index < opts.paths.length; index++) {
    const path = opts.paths[index];
    const reader = await openCatalog(path, {
      format: opts.format,
      delimiter: opts.delimiter,
      batchSize: opts.batchSize,
      hdu: opts.hdu,
      table: opts.table,
    });
    try {
      const { it, sample, binding } = await bindFromFirstBatch(reader, opts);
      const bound = new Map<Quantity, { column: string; unit: string }>();
      for (const b of binding.columns) bound.set(b.quantity, { column: b.column, unit: b.unit });
      const tally = new RowTally(opts.sink);
      const run = new InputRun(opts.rules, opts.selection, bound, tally);
      let rows = 0;
      const feed = (raw: RawBatch) => {
        const batch = toBatch(raw, binding, index);
        run.processBatch(batch);
        opts.observe?.(batch);
        rows += raw.length;
        opts.progress?.(path, rows, reader.progress?.() ?? null);
      };
      if (sample) feed(sample);
      for (let r = await it.next(); !r.done; r = await it.next()) feed(r.value);
      const ruleReports = run.finish();
      const stats = reader.stats;
      results.push({
        binding,
        rules: ruleReports,
        summary: {
          index,
          path,
          format: reader.format,
          records: stats.records,
          rows: stats.rows,
          unparseableRecords: stats.unparseable,
          rowsWithFindings: tally.rows.size,
          bound: binding.columns.map((b) => ({ quantity: b.quantity, column: b.column, unit: b.unit })),
          notes: [...(reader.notes ?? []), ...binding.notes],
        },
      });
    } finally {
      await reader.close();
    }
  }
  return results;
}
