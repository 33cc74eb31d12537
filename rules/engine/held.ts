/**
 * Items a rule holds back until the end of the input (row findings a column verdict may fold, rows
 * judged once a column offset is known), first in first out, in a spill log rather than in memory:
 * a capped buffer of twenty thousand findings per rule would otherwise make memory grow with the
 * rows until the cap, and nine such rules hold a few hundred megabytes at ten million rows.
 *
 * Each item is written as JSON (non-finite numbers kept) with a tag and the row shift gathered as
 * row ranges were absorbed, so the item itself never has to be rewritten when its range moves.
 */
import type { RowShift } from './types.js';
import { MemorySpill, type SpillHandle, type SpillLog, type SpillStore } from './spill.js';

/** Record fields: the caller's tag, then the rows and lines to add to the item's own numbers. */
const WIDTH = 3;
/** Items per partition of a log: what is read back into memory at once. */
const CHUNK = 1024;

/** One log of a queue and how many items it holds, in the order the queue gives them back. */
interface Part {
  log: SpillLog;
  length: number;
}

/** HeldQueue as plain data (see HeldQueue.save). */
export interface HeldQueueState {
  parts: { handle: SpillHandle; length: number }[];
  length: number;
}

const NON_FINITE = '\u0000n';

function encode(item: unknown): string {
  return JSON.stringify(item, (_k, v: unknown) => (typeof v === 'number' && !Number.isFinite(v) ? `${NON_FINITE}${v}` : v));
}

function decode<T>(text: string): T {
  return JSON.parse(text, (_k, v: unknown) => (typeof v === 'string' && v.startsWith(NON_FINITE) ? Number(v.slice(NON_FINITE.length)) : v)) as T;
}

/**
 * The queue is a list of logs, each filled in chunks of CHUNK items per partition: its own, and
 * those of later ranges it absorbed, in row order. Items are appended to the last log while it is
 * the queue's own; after an absorb, a new own log starts, so the order is always that of the rows.
 */
export class HeldQueue<T> {
  private parts: Part[] = [];
  /** Whether the last part takes appends (it is this queue's own, not an absorbed one). */
  private ownLast = false;
  private n = 0;
  private readonly record = new Float64Array(WIDTH);
  private readonly partitions: number;

  constructor(
    /** Most items held; `push` refuses more. */
    readonly cap: number,
    private readonly store: SpillStore = new MemorySpill(),
  ) {
    this.partitions = Math.max(1, Math.ceil(cap / CHUNK));
  }

  get length(): number {
    return this.n;
  }

  get full(): boolean {
    return this.n >= this.cap;
  }

  private own(): Part {
    if (!this.ownLast) {
      this.parts.push({ log: this.store.open(WIDTH, this.partitions), length: 0 });
      this.ownLast = true;
    }
    return this.parts[this.parts.length - 1];
  }

  private append(record: ArrayLike<number>, text: string | null): void {
    const part = this.own();
    part.log.append(Math.min(this.partitions - 1, Math.floor(part.length / CHUNK)), record, text);
    part.length++;
    this.n++;
  }

  /** Holds an item; false (and nothing held) when the queue is full. */
  push(item: T, tag = 0): boolean {
    if (this.n >= this.cap) return false;
    this.record[0] = tag;
    this.append(this.record, encode(item));
    return true;
  }

  /**
   * Every item in the order held, with its tag and the shift its row range has moved by since it
   * was held (zero for this run's own), read back a chunk at a time; the queue is empty afterwards.
   */
  drain(each: (item: T, tag: number, shift: RowShift) => void): void {
    const shift: RowShift = { rows: 0, lines: 0 };
    for (const part of this.parts) {
      const used = Math.min(this.partitions, Math.ceil(part.length / CHUNK));
      for (let p = 0; p < used; p++) {
        const { records, texts } = part.log.take(p);
        for (let i = 0; i < texts.length; i++) {
          shift.rows = records[i * WIDTH + 1];
          shift.lines = records[i * WIDTH + 2];
          each(decode<T>(texts[i]!), records[i * WIDTH], shift);
        }
      }
      part.log.close();
    }
    this.parts = [];
    this.ownLast = false;
    this.n = 0;
  }

  /** The held items of a row range, for the run that finishes the input; the queue takes no more. */
  save(): HeldQueueState {
    const parts = this.parts.map((p) => ({ handle: p.log.detach(), length: p.length }));
    this.parts = [];
    this.ownLast = false;
    return { parts, length: this.n };
  }

  /**
   * Takes in the items of the row range that follows, after this queue's own and shifted by
   * `shift`, up to the cap; returns how many did not fit (one pass would not have held them).
   */
  absorb(s: HeldQueueState, shift: RowShift): number {
    const add = [0, shift.rows, shift.lines];
    let refused = 0;
    for (const { handle, length } of s.parts) {
      const room = this.cap - this.n;
      if (length <= room) {
        this.parts.push({ log: this.store.adopt(handle, add), length });
        this.ownLast = false;
        this.n += length;
        continue;
      }
      const other = this.store.adopt(handle, add);
      if (room <= 0) {
        other.close();
        refused += length;
        continue;
      }
      // Only the first `room` fit: read them back (a chunk at a time) and hold them again, shifted.
      const chunks = Math.ceil(length / CHUNK);
      let left = room;
      for (let p = 0; p < chunks; p++) {
        const { records, texts } = other.take(p);
        for (let i = 0; i < texts.length && left > 0; i++, left--) this.append(records.subarray(i * WIDTH, (i + 1) * WIDTH), texts[i]);
      }
      other.close();
      refused += length - room;
    }
    return refused;
  }

  /** Frees what is held (temporary files included). */
  close(): void {
    for (const p of this.parts) p.log.close();
    this.parts = [];
    this.ownLast = false;
    this.n = 0;
  }
}
