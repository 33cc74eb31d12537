/**
 * 64-bit fingerprints of identifiers and of rows, and a set of them in typed arrays, for the
 * duplicate rules. Memory is a few typed-array slots per distinct key (no strings, no objects per
 * row), and the set stops growing at a cap the rule chooses, saying so rather than running out of
 * memory. Two independent 32-bit hashes make the 64-bit key: with 1e8 distinct keys the chance of
 * any false match is about 3e-4.
 */
import { columnFinding } from '../../engine/findings.js';
import { shiftFinding } from '../../engine/runner.js';
import { MemorySpill, type SpillHandle, type SpillLog, type SpillStore } from '../../engine/spill.js';
import type { Batch, Finding, FindingSink, RowShift, RuleStats, TextColumn } from '../../engine/types.js';

const f64 = new Float64Array(1);
const u32 = new Uint32Array(f64.buffer);

/** Murmur3's 32-bit finaliser: spreads every input bit over the whole word. */
function fmix(h: number): number {
  h ^= h >>> 16;
  h = Math.imul(h, 0x85ebca6b);
  h ^= h >>> 13;
  h = Math.imul(h, 0xc2b2ae35);
  h ^= h >>> 16;
  return h >>> 0;
}

/**
 * Accumulates the fields of one key (text and numbers) into two 32-bit hashes. Reused row after
 * row: `reset`, add the fields, read `hi` and `lo`.
 */
export class Fingerprint {
  private a = 0;
  private b = 0;
  hi = 0;
  lo = 0;

  reset(): this {
    this.a = 0x811c9dc5;
    this.b = 0x9747b28c;
    return this;
  }

  private mix(x: number): void {
    // FNV-1a on one side, a Murmur3 round on the other: two unrelated hashes of the same stream.
    this.a = Math.imul(this.a ^ x, 0x01000193);
    let k = Math.imul(x, 0xcc9e2d51);
    k = (k << 15) | (k >>> 17);
    k = Math.imul(k, 0x1b873593);
    let h = this.b ^ k;
    h = (h << 13) | (h >>> 19);
    this.b = (Math.imul(h, 5) + 0xe6546b64) | 0;
  }

  /**
   * A text field, trimmed, with runs of white space read as one space (`BD+20  2457` is
   * `BD+20 2457`); letter case is kept. A null field is distinct from an empty one.
   */
  text(s: string | null): this {
    if (s === null) {
      this.mix(0x7fffffff);
      return this;
    }
    let space = false;
    let started = false;
    for (let i = 0; i < s.length; i++) {
      const c = s.charCodeAt(i);
      if (c <= 32) {
        space = started;
        continue;
      }
      if (space) this.mix(32);
      space = false;
      started = true;
      this.mix(c);
    }
    this.mix(0x7ffffffe); // field separator: ("ab", "c") differs from ("a", "bc")
    return this;
  }

  /** A number field by its bits; every NaN is one value, and -0 is 0. */
  number(x: number): this {
    if (x !== x) {
      this.mix(0x7ffffffd);
      this.mix(0x7ffffffd);
    } else {
      f64[0] = x === 0 ? 0 : x;
      this.mix(u32[0]);
      this.mix(u32[1]);
    }
    return this;
  }

  /** Ends the key: `hi` and `lo` hold the fingerprint. */
  done(): this {
    this.hi = fmix(this.a ^ 0x2545f491);
    this.lo = fmix(this.b ^ 0x61c88647);
    return this;
  }
}

/** Returned by `FingerprintSet.add` when the set is full and the key was not in it. */
export const SET_FULL = -1;

/**
 * An open-addressing hash set of 64-bit fingerprints. Each distinct key gets an entry number
 * (0, 1, 2 ... in order of first sight) and the set keeps, per entry, the data row where the key
 * was first seen and how many rows carried it. Rules keep their own per-entry data in arrays
 * indexed by the entry number. About 32 bytes per distinct key.
 */
export class FingerprintSet {
  private keyHi: Uint32Array;
  private keyLo: Uint32Array;
  /** Entry number + 1 per slot; 0 is an empty slot. */
  private slot: Int32Array;
  private mask: number;
  size = 0;
  /** Data row (1-based) where each entry was first seen. */
  firstRow: Float64Array;
  /** Rows that carried each entry's key. */
  count: Uint32Array;
  /** Whether the last `add` met its key for the first time. */
  added = false;
  private readonly fp = new Fingerprint();

  constructor(
    /** Most distinct keys kept; later new keys are not stored (`add` returns SET_FULL). */
    readonly maxSize: number,
    initialSlots = 1024,
  ) {
    let n = 16;
    while (n < initialSlots) n *= 2;
    this.keyHi = new Uint32Array(n);
    this.keyLo = new Uint32Array(n);
    this.slot = new Int32Array(n);
    this.mask = n - 1;
    this.firstRow = new Float64Array(n >> 1);
    this.count = new Uint32Array(n >> 1);
  }

  /**
   * The entry of key (hi, lo), added with `row` as its first row when new; its count grows by one
   * either way. SET_FULL when the key is new and the set is at its cap.
   */
  add(hi: number, lo: number, row: number): number {
    let i = (lo ^ Math.imul(hi, 0x9e3779b1)) & this.mask;
    for (;;) {
      const s = this.slot[i];
      if (s === 0) break;
      if (this.keyLo[i] === lo && this.keyHi[i] === hi) {
        this.added = false;
        this.count[s - 1]++;
        return s - 1;
      }
      i = (i + 1) & this.mask;
    }
    this.added = true;
    if (this.size >= this.maxSize) return SET_FULL;
    const e = this.size++;
    if (e >= this.firstRow.length) {
      this.firstRow = growF64(this.firstRow, this.firstRow.length * 2);
      this.count = growU32(this.count, this.count.length * 2);
    }
    this.firstRow[e] = row;
    this.count[e] = 1;
    this.keyHi[i] = hi;
    this.keyLo[i] = lo;
    this.slot[i] = e + 1;
    if (this.size * 2 > this.slot.length) this.rehash();
    return e;
  }

  /** `add` for the fingerprint of one text (an identifier). */
  addText(text: string, row: number): number {
    this.fp.reset().text(text).done();
    return this.add(this.fp.hi, this.fp.lo, row);
  }

  private rehash(): void {
    const oldHi = this.keyHi;
    const oldLo = this.keyLo;
    const oldSlot = this.slot;
    const n = oldSlot.length * 2;
    this.keyHi = new Uint32Array(n);
    this.keyLo = new Uint32Array(n);
    this.slot = new Int32Array(n);
    this.mask = n - 1;
    for (let j = 0; j < oldSlot.length; j++) {
      const s = oldSlot[j];
      if (s === 0) continue;
      const hi = oldHi[j];
      const lo = oldLo[j];
      let i = (lo ^ Math.imul(hi, 0x9e3779b1)) & this.mask;
      while (this.slot[i] !== 0) i = (i + 1) & this.mask;
      this.keyHi[i] = hi;
      this.keyLo[i] = lo;
      this.slot[i] = s;
    }
  }
}

export function growF64(a: Float64Array, n: number): Float64Array {
  const out = new Float64Array(n);
  out.set(a);
  return out;
}

export function growF32(a: Float32Array, n: number): Float32Array {
  const out = new Float32Array(n);
  out.set(a);
  return out;
}

function growU32(a: Uint32Array, n: number): Uint32Array {
  const out = new Uint32Array(n);
  out.set(a);
  return out;
}

/**
 * The repeats one duplicate rule met in an input, and the row findings it lists: a table where
 * repeats are rare gets each repeated row listed; one where they are common (several rows per
 * star by design) gets one note and no listing. Repeats may be recorded in any order (the key log
 * replays one partition at a time); what is listed is the first `cap` by row, and the counts are
 * those of a pass in row order. Bounded: at most twice `cap` findings are held at once.
 */
export class RepeatLog {
  /** Rows judged (with a key). */
  rows = 0;
  /** Rows whose key was already seen. */
  repeats = 0;
  /** Distinct keys seen on two or more rows. */
  keysRepeated = 0;
  /** The most rows one key had, and that key's text (the first key to get there, in row order). */
  maxCount = 0;
  maxKey = '';
  private maxRow = Infinity;
  private readonly firstRows: FirstByRow;

  constructor(
    cap: number,
    /** Repeats are listed while at most this fraction of judged rows (or at most 10 rows) repeat. */
    private readonly listFraction: number,
  ) {
    this.firstRows = new FirstByRow(cap);
  }

  /**
   * For an input checked in row ranges: what the checking kept, which is the rows judged. Repeats
   * are only known once the key log is replayed over the whole input, so a range has none yet.
   */
  save(): RepeatLogState {
    if (this.repeats > 0) throw new Error('a repeat log is saved before its key log is replayed');
    return { rows: this.rows };
  }

  /** Takes in the rows judged in a later range. */
  absorb(state: RepeatLogState): void {
    this.rows += state.rows;
  }

  /** Records a repeat at `row` whose key now has `count` rows; `finding` is built only while it may be listed. */
  repeat(count: number, key: string, row: number, finding: () => Finding): void {
    this.repeats++;
    if (count === 2) this.keysRepeated++;
    if (count > this.maxCount || (count === this.maxCount && row < this.maxRow)) {
      this.maxCount = count;
      this.maxKey = key;
      this.maxRow = row;
    }
    this.firstRows.offer(row, finding);
  }

  /** The listed findings: the first `cap` repeats by row. */
  get held(): readonly Finding[] {
    return this.firstRows.list();
  }

  /** How the listed rows are described: all of them, or the first `cap` when there were more. */
  listedText(all: string): string {
    return this.held.length < this.repeats ? `; the first ${this.held.length} of them are listed` : all;
  }

  /** Whether the repeated rows are listed (repeats are rare) rather than summed up in one note. */
  listed(): boolean {
    return this.repeats <= 10 || this.repeats <= this.listFraction * this.rows;
  }

  /** The note that closes an input when anything repeated (message from `text`). */
  notes(rule: string, input: number, column: string, text: (log: this) => string): Finding[] {
    if (this.repeats === 0) return [];
    const values = { rowsCompared: this.rows, rowsRepeating: this.repeats, keysOnSeveralRows: this.keysRepeated, mostRowsForOneKey: this.maxCount };
    return [columnFinding({ input, rule, severity: 'note', columns: column ? [column] : [], values, message: `${column ? `${column}: ` : ''}${text(this)}` })];
  }

  /** Pushes the held findings when they are listed; returns whether they were. */
  flush(out: FindingSink): boolean {
    if (!this.listed()) return false;
    for (const f of this.held) out.push(f);
    return true;
  }
}

export interface RepeatLogState {
  rows: number;
}

/**
 * The row findings with the lowest rows among those offered in any order, at most `cap`: what a
 * pass in row order that stops listing after `cap` would have listed. Holds at most 2 cap.
 */
export class FirstByRow {
  private held: Finding[] = [];
  /** Rows after this one can no longer be among the first `cap`. */
  private cutoff = Infinity;

  constructor(private readonly cap: number) {}

  /** `build` is called only when the row may still be listed. */
  offer(row: number, build: () => Finding): void {
    if (row > this.cutoff) return;
    this.held.push(build());
    if (this.held.length >= 2 * this.cap) this.trim();
  }

  private trim(): void {
    const held = this.held;
    held.sort((a, b) => a.row! - b.row!);
    if (held.length >= this.cap) {
      held.length = this.cap;
      this.cutoff = held[this.cap - 1].row!;
    }
  }

  /** The kept findings in row order. */
  list(): readonly Finding[] {
    this.trim();
    return this.held;
  }

  /** The kept findings, for an input checked in row ranges (at most `cap`). */
  save(): FirstByRowState {
    return { held: [...this.list()] };
  }

  /**
   * Offers the findings kept over a later range, renumbered by `shift`. Only their row and line
   * move, so this is for findings whose other fields quote no row number.
   */
  absorb(state: FirstByRowState, shift: RowShift): void {
    for (const f of state.held) this.offer(f.row! + shift.rows, () => shiftFinding(f, shift));
  }
}

export interface FirstByRowState {
  held: Finding[];
}

/**
 * Partitions of a key log: at 10M rows each holds about 39 000 rows when it is replayed. Measured
 * on the 10M-row benchmark CSV (one thread): 64 partitions peaked at 412 MB, 256 at 362 MB, 1024
 * at 382 MB and slower (more files, smaller writes).
 */
export const KEY_LOG_PARTITIONS = 256;
const KEY_FIELDS = 4;

/**
 * The keys of one input's rows (64-bit fingerprints, with the row, line, a text and `extra`
 * numbers per row), kept in a spill log while the batches stream by and replayed at the end one
 * partition at a time. Keys go to partitions by hash, so equal keys meet in the same partition,
 * and replaying a partition in row order through a fresh set gives each key exactly the events a
 * single in-memory pass would. Memory: one partition's rows at a time, whatever the row count.
 */
export class KeyLog {
  private readonly log: SpillLog;
  private readonly rec: Float64Array;
  /** Distinct keys, known after `replay`. */
  distinct = 0;

  constructor(
    spill: SpillStore | undefined,
    readonly extra = 0,
  ) {
    this.log = (spill ?? new MemorySpill()).open(KEY_FIELDS + extra, KEY_LOG_PARTITIONS);
    this.rec = new Float64Array(KEY_FIELDS + extra);
  }

  /** The row's key (hi, lo) with its row, line, text and extra numbers (read from `extras` at `at`). */
  add(hi: number, lo: number, row: number, line: number | null, text: string | null, extras?: Float64Array): void {
    const r = this.rec;
    r[0] = hi;
    r[1] = lo;
    r[2] = row;
    r[3] = line === null ? NaN : line;
    if (extras) for (let k = 0; k < this.extra; k++) r[KEY_FIELDS + k] = extras[k];
    this.log.append(lo & (KEY_LOG_PARTITIONS - 1), r, text);
  }

  /** Hands the log over, for an input checked in row ranges; the log takes no more rows. */
  save(): KeyLogState {
    return { log: this.log.detach() };
  }

  /**
   * Takes in the keys of the rows of a later range, their rows and lines shifted by `shift`, after
   * those here: partition by partition, the records stay in row order.
   */
  absorb(state: KeyLogState, shift: RowShift): void {
    const add = new Float64Array(KEY_FIELDS + this.extra);
    add[2] = shift.rows;
    add[3] = shift.lines;
    this.log.absorb(state.log, add);
  }

  /**
   * Replays every partition: `visit` gets, per row in row order within its partition, the entry
   * number of its key in that partition, whether the row is the key's first, the key's first row
   * and its count so far, and the row's record (row at 2, line at 3, extras from 4) and text.
   * Closes the log.
   */
  replay(visit: (e: KeyEvent) => void): void {
    const ev: KeyEvent = { entry: 0, first: true, firstRow: 0, count: 0, records: new Float64Array(0), at: 0, text: null };
    this.distinct = 0;
    const w = KEY_FIELDS + this.extra;
    for (let p = 0; p < KEY_LOG_PARTITIONS; p++) {
      const { records, texts } = this.log.take(p);
      const n = records.length / w;
      if (n === 0) continue;
      const set = new FingerprintSet(Infinity, 2 * n);
      ev.records = records;
      for (let k = 0; k < n; k++) {
        const at = k * w;
        const e = set.add(records[at], records[at + 1], records[at + 2]);
        ev.entry = e;
        ev.first = set.added;
        ev.firstRow = set.firstRow[e];
        ev.count = set.count[e];
        ev.at = at;
        ev.text = texts[k];
        visit(ev);
      }
      this.distinct += set.size;
    }
    this.log.close();
  }
}

export interface KeyLogState {
  log: SpillHandle;
}

/** One row as `KeyLog.replay` hands it over (reused from row to row). */
export interface KeyEvent {
  /** Entry number of the row's key within its partition (0, 1, 2 ... in order of first sight). */
  entry: number;
  first: boolean;
  firstRow: number;
  count: number;
  records: Float64Array;
  /** Where the row's record starts in `records`: row at +2, line at +3 (NaN for none), extras from +4. */
  at: number;
  text: string | null;
}

/**
 * The id column of a batch for the rules that key on it, or null after skipping every row (no id
 * bound). Rows without an id are the caller's to skip.
 */
export function idColumnOf(batch: Batch, stats: RuleStats): TextColumn | null {
  const col = batch.text.id ?? null;
  if (!col) stats.skip('no id column bound', batch.length);
  return col;
}
