/**
 * Messages between the check command and its worker threads. Everything here is plain data that
 * the structured clone of postMessage copies (typed arrays included).
 */
import type { InputRunState, PartResult, RuleReport, RuleSelection } from '../../rules/engine/runner.js';
import type { ByteRange, CsvLayout, RangeCounts } from '../readers/byte-range.js';
import type { Batch, Finding } from '../../rules/engine/types.js';
import type { Binding, BindOptions } from '../binding/types.js';
import type { ReaderStats } from '../readers/types.js';

export interface ReaderSettings {
  format?: string;
  delimiter?: string;
  hdu?: number;
  table?: number;
  batchSize?: number;
}

export interface WorkerTask {
  input: number;
  path: string;
  reader: ReaderSettings;
  bind: BindOptions;
  selection: RuleSelection;
  /**
   * `first-rules`: read, bind and check each batch with the first `splitAt` rules, then hand the
   * batch on (the caller runs the rest). `whole`: run every rule and hand on only the findings.
   */
  mode: 'first-rules' | 'whole' | 'range';
  splitAt: number;
  /** `range`: check every rule over these bytes of the file, with the binding made from its first rows. */
  range?: { layout: CsvLayout; bytes: ByteRange; binding: Binding; sample?: Batch };
}

export type Position = { done: number; total: number; unit: 'bytes' | 'rows' } | null;

export type WorkerMessage =
  | { type: 'bound'; binding: Binding; sample?: Batch }
  | { type: 'batch'; batch: Batch; findings: Finding[]; position: Position }
  | { type: 'findings'; findings: Finding[]; rows: number; position: Position }
  | { type: 'done'; format: string; stats: ReaderStats; notes: string[]; part: PartResult | null; reports: RuleReport[] | null; rowsWithFindings: number }
  | { type: 'range-done'; stats: ReaderStats; notes: string[]; counts: RangeCounts; state: InputRunState }
  | { type: 'error'; name: string; message: string; path?: string; position?: string | null; column?: string | null };

/** How many batches a worker may be ahead of its reader before it waits: bounds the memory in flight. */
export const BATCHES_IN_FLIGHT = 4;
