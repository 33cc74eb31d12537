/**
 * 64-bit fingerprints of identifiers and of rows, and a set of them in typed arrays, for the
 * duplicate rules. Memory is a few typed-array slots per distinct key (no strings, no objects per
 * row), and the set stops growing at a cap the rule chooses, saying so rather than running out of
 * memory. Two independent 32-bit hashes make the 64-bit key: with 1e8 distinct keys the chance of
 * any false match is about 3e-4.
 */
import { columnFinding } from '../../engine/findings.js';
import type { Batch, Finding, FindingSink, RuleStats, TextColumn } from '../../engine/types.js';

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
 * The repeats one duplicate rule met in an input, and the row findings it holds back until the
 * end: a table where repeats are rare gets each repeated row listed; one where they are common
 * (several rows per star by design) gets one note and no listing. Bounded: at most `cap` findings
 * are held.
 */
export class RepeatLog {
  /** Rows judged (with a key). */
  rows = 0;
  /** Rows whose key was already seen. */
  repeats = 0;
  /** Distinct keys seen on two or more rows. */
  keysRepeated = 0;
  /** The most rows one key had, and that key's text. */
  maxCount = 0;
  maxKey = '';
  /** Keys not tracked once the set was full. */
  untracked = 0;
  readonly held: Finding[] = [];

  constructor(
    private readonly cap: number,
    /** Repeats are listed while at most this fraction of judged rows (or at most 10 rows) repeat. */
    private readonly listFraction: number,
  ) {}

  /** Records a repeat whose key now has `count` rows; holds `finding` while under the cap. */
  repeat(count: number, key: string, finding: () => Finding): void {
    this.repeats++;
    if (count === 2) this.keysRepeated++;
    if (count > this.maxCount) {
      this.maxCount = count;
      this.maxKey = key;
    }
    if (this.held.length < this.cap) this.held.push(finding());
  }

  /** How the listed rows are described: all of them, or the first `cap` when there were more. */
  listedText(all: string): string {
    return this.held.length < this.repeats ? `; the first ${this.held.length} of them are listed` : all;
  }

  /** Whether the repeated rows are listed (repeats are rare) rather than summed up in one note. */
  listed(): boolean {
    return this.repeats <= 10 || this.repeats <= this.listFraction * this.rows;
  }

  /**
   * The notes that close an input: the counts, when anything repeated (message from `text`), and
   * the rows left unchecked once the set was full.
   */
  notes(rule: string, input: number, column: string, text: (log: this) => string, maxKeys: number): Finding[] {
    const columns = column ? [column] : [];
    const note = (values: Finding['values'], message: string) => columnFinding({ input, rule, severity: 'note', columns, values, message });
    const out: Finding[] = [];
    if (this.repeats > 0) {
      const values = { rowsCompared: this.rows, rowsRepeating: this.repeats, keysOnSeveralRows: this.keysRepeated, mostRowsForOneKey: this.maxCount };
      out.push(note(values, `${column ? `${column}: ` : ''}${text(this)}`));
    }
    if (this.untracked > 0) {
      out.push(note({ untrackedRows: this.untracked, maxKeys }, `more than ${maxKeys} distinct keys: ${this.untracked} rows met after that were not checked for repeats (raise the rule's cap parameter)`));
    }
    return out;
  }

  /** Pushes the held findings when they are listed; returns whether they were. */
  flush(out: FindingSink): boolean {
    if (!this.listed()) return false;
    for (const f of this.held) out.push(f);
    return true;
  }
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
