/**
 * In-process helpers for the robustness tests: a reader drained into plain rows, and the whole
 * check of one input (reader, binder, rules) with the knobs the command line does not expose
 * (bytes per read), so results can be compared across batch sizes and chunkings cheaply.
 */
import { ALL_RULES } from '../../rules/checks/index.js';
import { InputRun, selectRules, type RuleReport } from '../../rules/engine/runner.js';
import type { Finding } from '../../rules/engine/types.js';
import { toBatch } from '../../cli/binding/to-batch.js';
import type { BindOptions } from '../../cli/binding/types.js';
import { bindFromFirstBatch, boundMap } from '../../cli/commands/input-steps.js';
import { openCatalog, type OpenOptions } from '../../cli/readers/open.js';
import type { CatalogReader, RawBatch, ReaderStats } from '../../cli/readers/types.js';

export interface Drained {
  columns: string[];
  rows: (string | number | null)[][];
  lines: (number | null)[];
  malformed: { row: number | null; line: number | null; message: string }[];
  stats: ReaderStats;
  notes: string[];
  /** Rows delivered in batches, counted independently of the reader's own stats. */
  delivered: number;
  /** Records reported with no row (index -1). */
  rowless: number;
}

function cell(col: RawBatch['columns'][number], i: number): string | number | null {
  if (col.kind === 'text') return col.values[i];
  if (col.kind === 'number') return col.nulls !== null && col.nulls[i] === 1 ? null : col.values[i];
  return col.values[i];
}

/** Reads every batch of a reader into rows, checking each batch's shape on the way. */
export async function drain(reader: CatalogReader): Promise<Drained> {
  const out: Drained = {
    columns: reader.columns.map((c) => c.name),
    rows: [],
    lines: [],
    malformed: [],
    stats: { records: 0, rows: 0, unparseable: 0 },
    notes: [],
    delivered: 0,
    rowless: 0,
  };
  try {
    let first = 1;
    for await (const b of reader.batches()) {
      if (b.firstRow !== first) throw new Error(`batch starts at row ${b.firstRow}, expected ${first}`);
      if (b.columns.length !== reader.columns.length) throw new Error(`batch has ${b.columns.length} columns, the reader ${reader.columns.length}`);
      for (const c of b.columns) if (c.values.length !== b.length) throw new Error(`a column holds ${c.values.length} values for ${b.length} rows`);
      first += b.length;
      out.delivered += b.length;
      for (let i = 0; i < b.length; i++) {
        out.rows.push(b.columns.map((c) => cell(c, i)));
        out.lines.push(b.lines ? b.lines[i] : null);
      }
      for (const m of b.malformed) {
        if (m.index >= b.length) throw new Error(`malformed record at index ${m.index} of a ${b.length}-row batch`);
        if (m.index < 0) out.rowless++;
        out.malformed.push({ row: m.index < 0 ? null : b.firstRow + m.index, line: m.line, message: m.message });
      }
    }
  } finally {
    await reader.close();
  }
  out.stats = { ...reader.stats };
  out.notes = [...(reader.notes ?? [])];
  return out;
}

export async function drainPath(path: string, options: OpenOptions = {}): Promise<Drained> {
  return drain(await openCatalog(path, options));
}

export interface Checked {
  findings: Finding[];
  reports: RuleReport[];
  stats: ReaderStats;
}

/** The check of one input as the command line runs it, in this process, with every rule. */
export async function checkPath(path: string, options: OpenOptions = {}, bind: BindOptions = { bind: {}, units: {} }): Promise<Checked> {
  const reader = await openCatalog(path, options);
  try {
    const { it, ahead, binding, sampleBatch } = await bindFromFirstBatch(reader, bind);
    const findings: Finding[] = [];
    const rules = selectRules(ALL_RULES, {});
    const run = new InputRun(rules, {}, boundMap(binding), { push: (f) => findings.push(f) }, undefined, undefined, undefined, sampleBatch);
    const feed = (raw: RawBatch) => run.processBatch(toBatch(raw, binding, 0));
    for (const raw of ahead) feed(raw);
    for (let r = await it.next(); !r.done; r = await it.next()) feed(r.value);
    const reports = run.finish();
    return { findings, reports, stats: { ...reader.stats } };
  } finally {
    await reader.close();
  }
}
