/**
 * What every catalog reader yields: column metadata once, then columnar batches of raw values.
 * Raw means "as the file holds it": text cells as strings, binary numbers as Float64Array. The
 * binder turns raw batches into canonical engine batches.
 */

export interface ColumnMeta {
  name: string;
  /** Unit string declared by the file's metadata (FITS TUNITn, VOTable unit, ECSV unit); null if none. */
  unit: string | null;
  /** UCD declared by the file's metadata; null if none. */
  ucd: string | null;
  description: string | null;
  /** Storage type as the format declares it. Text formats without metadata say `text`. */
  type: 'text' | 'float' | 'integer' | 'boolean';
}

export type RawColumn =
  /** One string per row; null where the cell is absent (short row) or a typed null. */
  | { kind: 'text'; values: (string | null)[] }
  /** Numbers from a binary format; NaN for NaN; `nulls[i] = 1` for a typed null (then values[i] is NaN). */
  | { kind: 'number'; values: Float64Array; nulls: Uint8Array | null }
  /**
   * Text read straight into numbers (the CSV fast path): `values` holds each plain decimal, NaN
   * for empty and absent cells and for the cells listed in `oddIndex`/`oddText`, which were not
   * plain decimals and are kept as written for the binder's lenient reading.
   */
  | { kind: 'scanned'; values: Float64Array; oddIndex: number[]; oddText: string[] };

export interface MalformedRecord {
  /** Index in the batch of the row this record became, or -1 when no row was produced. */
  index: number;
  /** Physical line where the record starts (text formats), else null. */
  line: number | null;
  message: string;
}

export interface RawBatch {
  length: number;
  /** 1-based data row of the first row in this batch. */
  firstRow: number;
  /** Physical line where each row starts (text formats); null for binary formats. */
  lines: Int32Array | null;
  /** One entry per ColumnMeta, in the same order. */
  columns: RawColumn[];
  /** Records that were ragged or broken. A record that produced no row still appears here with index -1. */
  malformed: MalformedRecord[];
}

export interface ReaderStats {
  /** Data records seen (header and comment lines excluded). */
  records: number;
  /** Rows delivered in batches. */
  rows: number;
  /** Records that could not become a row at all. */
  unparseable: number;
}

export interface CatalogReader {
  readonly format: 'csv' | 'tsv' | 'arrow' | string;
  readonly path: string;
  readonly columns: ColumnMeta[];
  batches(): AsyncIterable<RawBatch>;
  /** Final after batches() is exhausted. */
  readonly stats: ReaderStats;
  /**
   * Things the reader changed or skipped that the user should hear about (renamed columns,
   * skipped blank lines). Filled at open; a reader may append more while batches() runs.
   */
  readonly notes?: string[];
  /**
   * How far the reading has got, for a progress line: bytes of the file or rows of a table whose
   * size is known. Absent where neither is known (stdin, gzip, Arrow streams).
   */
  progress?(): { done: number; total: number; unit: 'bytes' | 'rows' } | null;
  close(): Promise<void>;
}

export interface ReaderOptions {
  /** Rows per batch; default 16384. */
  batchSize?: number;
  /** CSV: a delimiter to use instead of detecting one. */
  delimiter?: string;
}

/** A reader failure the CLI reports as one line with exit code 2 (never a stack trace). */
export class InputError extends Error {
  constructor(
    message: string,
    readonly path: string,
    readonly position: string | null = null,
  ) {
    super(message);
    this.name = 'InputError';
  }
}
