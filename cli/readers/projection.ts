/**
 * Column projection: once the binder knows which columns the rules read, a reader that can skip
 * the others (Parquet decodes column by column, FITS decodes each field separately) is told so.
 * Skipped columns still appear in later batches, as all-null text, so every batch keeps the
 * shape its ColumnMeta list promises.
 */
import type { CatalogReader, RawColumn } from './types.js';

export interface ColumnProjection {
  /**
   * Later batches need to hold real values only in these columns (indices into `columns`, all
   * of them); those also in `textIndices` are read as text, the others as numbers (a reader that
   * keeps each column in its stored type may ignore the distinction).
   */
  selectColumns(indices: readonly number[], textIndices?: readonly number[]): void;
}

export function canSelectColumns(reader: CatalogReader): reader is CatalogReader & ColumnProjection {
  return typeof (reader as Partial<ColumnProjection>).selectColumns === 'function';
}

/** Which columns to decode: all of them until a selection arrives. */
export class Selection {
  private wanted: Uint8Array | null = null;

  constructor(private readonly count: number) {}

  select(indices: readonly number[]): void {
    const w = new Uint8Array(this.count);
    for (const i of indices) if (i >= 0 && i < this.count) w[i] = 1;
    this.wanted = w;
  }

  has(index: number): boolean {
    return this.wanted === null || this.wanted[index] === 1;
  }
}

/** A column of `length` nulls, for a column the rules do not read. */
export function skippedColumn(length: number): RawColumn {
  return { kind: 'text', values: new Array<string | null>(length).fill(null) };
}
