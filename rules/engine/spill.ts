/**
 * Append-only logs split into hash partitions, for rules whose whole-input state would otherwise
 * grow with the rows (the duplicate rules keep one record per row). A rule appends fixed-width
 * numeric records, each with an optional text, while the batches stream by, and at the end of
 * the input reads the partitions back one at a time, so what it holds at once is one partition.
 *
 * An input checked in row ranges (threads, shards of one file) gives each range a log of its own.
 * A range's log hands itself over as a SpillHandle (plain data, so it crosses a thread's structured
 * clone and a shard's state file), and the log of the run that finishes the input absorbs the
 * handles in row order, shifting the row numbers in the records, as if it had been appended to
 * all along.
 *
 * The engine stays pure: the command line hands rules a store that keeps the partitions in
 * temporary files (cli/spill/file-spill.ts); without one, rules use MemorySpill.
 */

/**
 * Numbers added to the fields of every record a log absorbs, one per field (missing or 0 leaves
 * the field as it is): the row and line fields of a later range, shifted to the whole input.
 */
export type RecordShift = ArrayLike<number>;

/** A log kept in memory, handed over with its records. */
export interface MemorySpillHandle {
  spillHandle: 'memory';
  width: number;
  partitions: number;
  /** Per partition, its records (`width` numbers each) in the order appended. */
  records: Float64Array[];
  /** Per partition, the text of each record, null where none was given. */
  texts: (string | null)[][];
}

/**
 * A log kept in files, handed over by where they are; the files are not copied. Every folder
 * involved is the `dir` of exactly one object with `spillHandle: 'files'` (this one or one nested
 * in `segments`), so a caller that moves the folders (a shard's state, gathered from another
 * machine) rewrites each such `dir` and nothing else.
 */
export interface FileSpillHandle {
  spillHandle: 'files';
  width: number;
  partitions: number;
  /** Absolute folder of this handle's own records; it may hold none (a log that only absorbed others). */
  dir: string;
  /**
   * The records in order. A string is a run of records in `dir`: partition p of run `s` is the file
   * `<dir>/<s>.<p>.rec` (float64 in the platform's byte order, `width` per record) with its texts
   * in `<dir>/<s>.<p>.txt` (one line per record, see cli/spill/file-spill.ts); a partition without
   * records has no files. A nested handle is a run in another folder (a log this one absorbed).
   */
  segments: (string | FileSpillHandle)[];
  /** Added to every record of this handle, nested ones included, when read; null for none. */
  add: number[] | null;
  /**
   * Whoever reads these files (nested ones included) leaves them in place, as `merge` does with
   * a shard's state files. Without it, the log absorbing the handle owns the folders and removes
   * them when it is closed.
   */
  keep?: boolean;
}

/** One run of records of a file log, flattened out of a handle: what a file log reads. */
export interface FileRun {
  dir: string;
  name: string;
  /** The shift of every handle around it, composed. */
  add: number[] | null;
  keep: boolean;
}

/** The runs of a file handle in order, with `shift` (that of the absorbing log) composed into each. */
export function fileRuns(h: FileSpillHandle, shift?: ArrayLike<number> | null, keep = false, out: FileRun[] = []): FileRun[] {
  const add = composeShift(h.width, h.add, shift);
  const kept = keep || h.keep === true;
  for (const s of h.segments) {
    if (typeof s === 'string') out.push({ dir: h.dir, name: s, add, keep: kept });
    else fileRuns(s, add, kept, out);
  }
  return out;
}

/** The folders the receiver of a file handle takes charge of (removes when done): none that are kept. */
export function ownedFolders(h: FileSpillHandle): string[] {
  const owned = new Set<string>();
  const kept = new Set<string>();
  const walk = (x: FileSpillHandle, keep: boolean) => {
    const k = keep || x.keep === true;
    (k ? kept : owned).add(x.dir);
    for (const s of x.segments) if (typeof s !== 'string') walk(s, k);
  };
  walk(h, false);
  return [...owned].filter((d) => !kept.has(d));
}

/** What `SpillLog.detach` gives: structured-cloneable plain data. */
export type SpillHandle = MemorySpillHandle | FileSpillHandle;

export interface SpillLog {
  readonly width: number;
  readonly partitions: number;
  /** One record of `width` numbers into a partition; `text` travels with it. */
  append(partition: number, record: ArrayLike<number>, text?: string | null): void;
  /**
   * Every record of a partition in the order appended (absorbed records in their place), with their
   * texts (null where none was given); the partition is emptied. Call once per partition, after
   * the last append.
   */
  take(partition: number): { records: Float64Array; texts: (string | null)[] };
  /** Frees what is left (temporary files included, those of absorbed handles too). */
  close(): void;
  /**
   * Hands the log over: buffers are written out, the log takes no more appends, and its files are
   * no longer removed by this log, its store or the process's exit: they belong to whoever absorbs
   * the handle (or discards it). Call before any `take`.
   */
  detach(): SpillHandle;
  /**
   * Takes in the records of another log, per partition after those already here, each record
   * shifted by `shift`. The handle may come from another thread or process; memory stays bounded
   * (a file handle is read at `take` time, one partition at a time). The handle's temporary files
   * now belong to this log, which removes them as it reads them and when it is closed.
   */
  absorb(handle: SpillHandle, shift?: RecordShift): void;
}

export interface SpillStore {
  open(width: number, partitions: number): SpillLog;
  /** A new log that holds the records of a handle (`open` then `absorb`). */
  adopt(handle: SpillHandle, shift?: RecordShift): SpillLog;
}

export function isSpillHandle(x: unknown): x is SpillHandle {
  return typeof x === 'object' && x !== null && ((x as SpillHandle).spillHandle === 'memory' || (x as SpillHandle).spillHandle === 'files');
}

/**
 * Every SpillHandle inside a saved state (plain objects, arrays and Maps), for a caller that must
 * mark them kept, list their folders, or discard them when a run is abandoned.
 */
export function spillHandlesIn(state: unknown, out: SpillHandle[] = []): SpillHandle[] {
  if (typeof state !== 'object' || state === null || ArrayBuffer.isView(state)) return out;
  if (isSpillHandle(state)) {
    out.push(state);
    return out;
  }
  if (state instanceof Map) {
    for (const v of state.values()) spillHandlesIn(v, out);
  } else if (Array.isArray(state)) {
    for (const v of state) spillHandlesIn(v, out);
  } else {
    for (const v of Object.values(state)) spillHandlesIn(v, out);
  }
  return out;
}

/** Two shifts as one (adding numbers to a field twice is adding their sum); null when both are none. */
export function composeShift(width: number, a: ArrayLike<number> | null | undefined, b: ArrayLike<number> | null | undefined): number[] | null {
  if (!isShift(a) && !isShift(b)) return null;
  const out = new Array<number>(width).fill(0);
  for (let k = 0; k < width; k++) out[k] = (a?.[k] ?? 0) + (b?.[k] ?? 0);
  return out;
}

function isShift(s: ArrayLike<number> | null | undefined): s is ArrayLike<number> {
  if (!s) return false;
  for (let k = 0; k < s.length; k++) if (s[k]) return true;
  return false;
}

/**
 * Adds `shift` to the fields of every record in `records[from, to)`. Fields whose shift is 0 are
 * left alone, so a -0 or any payload number comes back bit for bit.
 */
export function shiftRecords(records: Float64Array, width: number, shift: ArrayLike<number> | null | undefined, from = 0, to = records.length): void {
  if (!shift) return;
  for (let k = 0; k < width && k < shift.length; k++) {
    const d = shift[k];
    if (!d) continue;
    for (let i = from + k; i < to; i += width) records[i] += d;
  }
}

export function checkHandleShape(h: SpillHandle, width: number, partitions: number): void {
  if (h.width !== width || h.partitions !== partitions) {
    throw new Error(`a spill log of ${width} numbers in ${partitions} partitions cannot absorb one of ${h.width} in ${h.partitions}`);
  }
}

/** Partitions kept in memory: for tests and small inputs; the same results as a file store. */
export class MemorySpill implements SpillStore {
  open(width: number, partitions: number): SpillLog {
    return new MemoryLog(width, partitions);
  }
  adopt(handle: SpillHandle, shift?: RecordShift): SpillLog {
    const log = this.open(handle.width, handle.partitions);
    log.absorb(handle, shift);
    return log;
  }
}

class MemoryLog implements SpillLog {
  private readonly data: number[][];
  private readonly texts: (string | null)[][];
  private detached = false;
  constructor(
    readonly width: number,
    readonly partitions: number,
  ) {
    this.data = Array.from({ length: partitions }, () => []);
    this.texts = Array.from({ length: partitions }, () => []);
  }
  append(partition: number, record: ArrayLike<number>, text: string | null = null): void {
    if (this.detached) throw new Error('append to a detached spill log');
    const d = this.data[partition];
    for (let k = 0; k < this.width; k++) d.push(record[k]);
    this.texts[partition].push(text);
  }
  take(partition: number): { records: Float64Array; texts: (string | null)[] } {
    if (this.detached) throw new Error('take from a detached spill log');
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
  detach(): MemorySpillHandle {
    if (this.detached) throw new Error('a spill log is detached once');
    this.detached = true;
    const handle: MemorySpillHandle = { spillHandle: 'memory', width: this.width, partitions: this.partitions, records: [], texts: [] };
    for (let p = 0; p < this.partitions; p++) {
      handle.records.push(Float64Array.from(this.data[p]));
      handle.texts.push(this.texts[p]);
      this.data[p] = [];
      this.texts[p] = [];
    }
    return handle;
  }
  absorb(handle: SpillHandle, shift?: RecordShift): void {
    if (this.detached) throw new Error('absorb into a detached spill log');
    checkHandleShape(handle, this.width, this.partitions);
    // Files are for the command line's store: the engine reads none.
    if (handle.spillHandle !== 'memory') throw new Error('MemorySpill cannot absorb a file spill handle; give the run a FileSpill');
    const w = this.width;
    for (let p = 0; p < this.partitions; p++) {
      const rec = handle.records[p];
      const d = this.data[p];
      for (let i = 0; i < rec.length; i += w) {
        for (let k = 0; k < w; k++) d.push(shift && shift[k] ? rec[i + k] + shift[k] : rec[i + k]);
      }
      const t = this.texts[p];
      for (const s of handle.texts[p]) t.push(s);
    }
  }
}
