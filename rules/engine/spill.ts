/**
 * Append-only logs split into hash partitions, for rules whose whole-input state would otherwise
 * grow with the rows (the duplicate rules keep one record per row). A rule appends fixed-width
 * numeric records, each with an optional text, while the batches stream by, and at the end of
 * the input reads the partitions back one at a time, so what it holds at once is one partition.
 *
 * The engine stays pure: the command line hands rules a store that keeps the partitions in
 * temporary files (cli/spill/file-spill.ts); without one, rules use MemorySpill.
 */

export interface SpillLog {
  readonly width: number;
  readonly partitions: number;
  /** One record of `width` numbers into a partition; `text` travels with it. */
  append(partition: number, record: ArrayLike<number>, text?: string | null): void;
  /**
   * Every record of a partition in the order appended, with their texts (null where none was
   * given); the partition is emptied. Call once per partition, after the last append.
   */
  take(partition: number): { records: Float64Array; texts: (string | null)[] };
  /** Frees what is left (temporary files included). */
  close(): void;
}

export interface SpillStore {
  open(width: number, partitions: number): SpillLog;
}

/** Partitions kept in memory: for tests and small inputs; the same results as a file store. */
export class MemorySpill implements SpillStore {
  open(width: number, partitions: number): SpillLog {
    return new MemoryLog(width, partitions);
  }
}

class MemoryLog implements SpillLog {
  private readonly data: number[][];
  private readonly texts: (string | null)[][];
  constructor(
    readonly width: number,
    readonly partitions: number,
  ) {
    this.data = Array.from({ length: partitions }, () => []);
    this.texts = Array.from({ length: partitions }, () => []);
  }
  append(partition: number, record: ArrayLike<number>, text: string | null = null): void {
    const d = this.data[partition];
    for (let k = 0; k < this.width; k++) d.push(record[k]);
    this.texts[partition].push(text);
  }
  take(partition: number): { records: Float64Array; texts: (string | null)[] } {
    const out = { records: Float64Array.from(this.data[partition]), texts: this.texts[partition] };
    this.data[partition] = [];
    this.texts[partition] = [];
    return out;
  }
  close(): void {
    for (let p = 0; p < this.partitions; p++) {
      this.data[p] = [];
      this.texts[p] = [];
    }
  }
}
