/**
 * The spill store of a real run: each partition of a log is two files, one of float64 records and
 * one of their texts (one per line), appended to in buffered blocks so that memory holds at most
 * one block per partition. The files live in one folder per log under the system's temporary
 * folder (or STARSIEVE_TMPDIR, or the store's `root`) and are removed when the log is closed, and
 * at exit for runs that stop early.
 *
 * A detached log's files outlive it: its handle names them, and the log that absorbs the handle
 * (in another thread or process) reads them in place at `take` time, shifting the records as it
 * reads, so nothing is copied; it then removes them, unless the handle or the store says to keep
 * them (a shard's state files, read by `merge`).
 */
import { appendFileSync, closeSync, mkdirSync, mkdtempSync, openSync, readFileSync, readSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import {
  checkHandleShape,
  fileRuns,
  ownedFolders,
  shiftRecords,
  type FileRun,
  type FileSpillHandle,
  type RecordShift,
  type SpillHandle,
  type SpillLog,
  type SpillStore,
} from '../../rules/engine/spill.js';

/**
 * Bytes of records (or characters of text) buffered per partition before they are appended to its
 * files: with 256 key-log partitions, 4 MB per log.
 */
const BLOCK_BYTES = 16 * 1024;

/** Folders this thread removes at exit: those of logs not closed and not handed over. */
const live = new Set<string>();
let hooked = false;

function removeAll(): void {
  for (const dir of live) rmSync(dir, { recursive: true, force: true });
  live.clear();
}

function own(dir: string): void {
  if (!hooked) {
    hooked = true;
    // In a worker thread this runs when the thread ends.
    process.once('exit', removeAll);
  }
  live.add(dir);
}

export interface FileSpillOptions {
  /** Folder the logs' folders are made in (created if missing), instead of the temporary folder. */
  root?: string;
  /**
   * Logs of this store read the files of the handles they absorb but never delete them, as if every
   * handle had `keep` (for `merge`, which reads shard state files that must stay).
   */
  keepAbsorbed?: boolean;
}

export class FileSpill implements SpillStore {
  constructor(private readonly options: FileSpillOptions = {}) {}

  open(width: number, partitions: number): SpillLog {
    let root = process.env.STARSIEVE_TMPDIR || tmpdir();
    if (this.options.root) {
      root = resolve(this.options.root);
      mkdirSync(root, { recursive: true });
    }
    const dir = mkdtempSync(join(root, 'starsieve-spill-'));
    own(dir);
    return new FileLog(dir, width, partitions, this.options.keepAbsorbed ?? false);
  }

  adopt(handle: SpillHandle, shift?: RecordShift): SpillLog {
    const log = this.open(handle.width, handle.partitions);
    log.absorb(handle, shift);
    return log;
  }
}

/** The store every run of the command line uses. */
export const FILE_SPILL = new FileSpill();

/**
 * Removes the files a handle that will never be absorbed still owns (a run abandoned between
 * ranges); a kept handle's files stay. Memory handles hold nothing on disk.
 */
export function discardHandle(h: SpillHandle): void {
  if (h.spillHandle !== 'files') return;
  for (const dir of ownedFolders(h)) {
    rmSync(dir, { recursive: true, force: true });
    live.delete(dir);
  }
}

/** Files of a partition of one run of records. */
function fileOf(s: { dir: string; name: string }, partition: number, kind: 'rec' | 'txt'): string {
  return join(s.dir, `${s.name}.${partition}.${kind}`);
}

function sizeOf(path: string): number {
  try {
    return statSync(path).size;
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT') return -1;
    throw e;
  }
}

/** Reads a whole file into `into` from byte `at` (a typed array's bytes, so the records stay aligned). */
function readInto(path: string, into: Uint8Array, at: number, bytes: number): void {
  const fd = openSync(path, 'r');
  try {
    let done = 0;
    while (done < bytes) {
      const n = readSync(fd, into, at + done, bytes - done, done);
      if (n === 0) throw new Error(`spill file ${path} ended early`);
      done += n;
    }
  } finally {
    closeSync(fd);
  }
}

class FileLog implements SpillLog {
  private readonly buffers: Float64Array[];
  private readonly filled: Int32Array;
  private readonly textBuffers: string[][];
  /** Characters of text buffered per partition. */
  private readonly textChars: Float64Array;
  private readonly capacity: number;
  /** Partitions of the run being appended to that have files. */
  private readonly written: Uint8Array;
  /** Every run of records in order, this log's own (in `dir`) and absorbed ones; appends go to `current`, the last. */
  private readonly segments: (FileRun & { own: boolean })[] = [];
  private current: FileRun | null = null;
  private ownSegments = 0;
  /** Folders this log removes when it is closed: its own, and those of handles it absorbed. */
  private readonly folders = new Set<string>();
  private detached = false;

  constructor(
    private readonly dir: string,
    readonly width: number,
    readonly partitions: number,
    private readonly keepAbsorbed: boolean,
  ) {
    this.capacity = Math.max(1, Math.floor(BLOCK_BYTES / 8 / width)) * width;
    this.buffers = Array.from({ length: partitions }, () => new Float64Array(0));
    this.filled = new Int32Array(partitions);
    this.textBuffers = Array.from({ length: partitions }, () => []);
    this.textChars = new Float64Array(partitions);
    this.written = new Uint8Array(partitions);
    this.folders.add(dir);
  }

  append(partition: number, record: ArrayLike<number>, text: string | null = null): void {
    let buf = this.buffers[partition];
    // Blocks are allocated on first use, so an unused partition costs nothing.
    if (buf.length === 0) {
      if (this.detached) throw new Error('append to a detached spill log');
      this.segment();
      buf = this.buffers[partition] = new Float64Array(this.capacity);
    }
    let at = this.filled[partition];
    for (let k = 0; k < this.width; k++) buf[at++] = record[k];
    this.filled[partition] = at;
    const t = encodeText(text);
    this.textBuffers[partition].push(t);
    // Texts count too: a log of few, long texts (held findings) must not keep them all in memory.
    this.textChars[partition] += t.length;
    if (at === buf.length || this.textChars[partition] >= BLOCK_BYTES) this.flush(partition);
  }

  /** The run appends go to, started after the last absorbed one when needed. */
  private segment(): FileRun {
    if (!this.current) {
      const run = { dir: this.dir, name: `s${this.ownSegments++}`, add: null, keep: false, own: true };
      this.current = run;
      this.segments.push(run);
      this.written.fill(0);
    }
    return this.current;
  }

  private flush(partition: number): void {
    const n = this.filled[partition];
    if (n === 0) return;
    const s = this.current!;
    const b = this.buffers[partition];
    appendFileSync(fileOf(s, partition, 'rec'), new Uint8Array(b.buffer, b.byteOffset, n * 8));
    appendFileSync(fileOf(s, partition, 'txt'), this.textBuffers[partition].join('\n') + '\n');
    this.filled[partition] = 0;
    this.textBuffers[partition] = [];
    this.textChars[partition] = 0;
    this.written[partition] = 1;
  }

  /** Writes out every buffer and ends the current run: what follows goes after it. */
  private seal(): void {
    if (!this.current) return;
    for (let p = 0; p < this.partitions; p++) {
      this.flush(p);
      this.buffers[p] = new Float64Array(0);
    }
    this.current = null;
  }

  take(partition: number): { records: Float64Array; texts: (string | null)[] } {
    if (this.detached) throw new Error('take from a detached spill log');
    const cur = this.current;
    const n = this.filled[partition];
    // The common case: a log only appended to, whose partition never filled a block, is all in memory.
    if (this.segments.length === 0 || (this.segments.length === 1 && cur !== null && !this.written[partition])) {
      const out = { records: this.buffers[partition].slice(0, n), texts: this.textBuffers[partition].map(parseText) };
      this.filled[partition] = 0;
      this.textBuffers[partition] = [];
      this.textChars[partition] = 0;
      this.buffers[partition] = new Float64Array(0);
      return out;
    }
    // Sizes first, so the partition is read into one array of its final length.
    const sizes = this.segments.map((s) => (s === cur && !this.written[partition] ? -1 : sizeOf(fileOf(s, partition, 'rec'))));
    let total = n;
    for (const b of sizes) if (b > 0) total += b / 8;
    const records = new Float64Array(total);
    const bytes = new Uint8Array(records.buffer);
    const texts: (string | null)[] = [];
    let at = 0;
    this.segments.forEach((s, k) => {
      const size = sizes[k];
      if (size < 0) return;
      readInto(fileOf(s, partition, 'rec'), bytes, at * 8, size);
      shiftRecords(records, this.width, s.add, at, at + size / 8);
      at += size / 8;
      const lines = readFileSync(fileOf(s, partition, 'txt'), 'utf8').split('\n');
      lines.pop();
      for (const line of lines) texts.push(parseText(line));
      if (!s.keep) {
        rmSync(fileOf(s, partition, 'rec'), { force: true });
        rmSync(fileOf(s, partition, 'txt'), { force: true });
      }
    });
    if (cur && n > 0) {
      records.set(this.buffers[partition].subarray(0, n), at);
      for (const t of this.textBuffers[partition]) texts.push(parseText(t));
    }
    if (texts.length * this.width !== records.length) throw new Error('spill log texts and records disagree');
    this.filled[partition] = 0;
    this.textBuffers[partition] = [];
    this.textChars[partition] = 0;
    this.buffers[partition] = new Float64Array(0);
    if (cur) this.written[partition] = 0;
    return { records, texts };
  }

  close(): void {
    if (this.detached) return;
    for (const dir of this.folders) {
      rmSync(dir, { recursive: true, force: true });
      live.delete(dir);
    }
    this.folders.clear();
  }

  detach(): FileSpillHandle {
    if (this.detached) throw new Error('a spill log is detached once');
    this.seal();
    this.detached = true;
    const owned = [...this.folders];
    for (const dir of owned) live.delete(dir);
    this.folders.clear();
    // Own runs by name; absorbed runs as nested handles, one per folder, shift and keep in a row.
    const segments: FileSpillHandle['segments'] = [];
    let last: FileSpillHandle | null = null;
    for (const s of this.segments) {
      if (s.own) {
        segments.push(s.name);
        last = null;
        continue;
      }
      if (last && last.dir === s.dir && (last.keep === true) === s.keep && sameShift(last.add, s.add)) {
        last.segments.push(s.name);
        continue;
      }
      last = { spillHandle: 'files', width: this.width, partitions: this.partitions, dir: s.dir, segments: [s.name], add: s.add ? [...s.add] : null, ...(s.keep ? { keep: true } : {}) };
      segments.push(last);
    }
    // Folders this log owned that hold no run any more (a log that only absorbed) still go with it.
    const named = new Set(this.segments.map((s) => s.dir));
    for (const dir of owned) {
      if (dir !== this.dir && !named.has(dir)) segments.push({ spillHandle: 'files', width: this.width, partitions: this.partitions, dir, segments: [], add: null });
    }
    return { spillHandle: 'files', width: this.width, partitions: this.partitions, dir: this.dir, segments, add: null };
  }

  absorb(handle: SpillHandle, shift?: RecordShift): void {
    if (this.detached) throw new Error('absorb into a detached spill log');
    checkHandleShape(handle, this.width, this.partitions);
    if (handle.spillHandle === 'memory') {
      // Written out block by block like any append, in a run after what is already here.
      const rec = new Float64Array(this.width);
      for (let p = 0; p < this.partitions; p++) {
        const src = handle.records[p];
        const texts = handle.texts[p];
        for (let i = 0, r = 0; i < src.length; i += this.width, r++) {
          for (let k = 0; k < this.width; k++) rec[k] = shift && shift[k] ? src[i + k] + shift[k] : src[i + k];
          this.append(p, rec, texts[r]);
        }
      }
      return;
    }
    this.seal();
    for (const run of fileRuns(handle, shift, this.keepAbsorbed)) this.segments.push({ ...run, dir: resolve(run.dir), own: false });
    if (!this.keepAbsorbed) {
      for (const dir of ownedFolders(handle)) {
        this.folders.add(resolve(dir));
        own(resolve(dir));
      }
    }
  }
}

function sameShift(a: number[] | null, b: number[] | null): boolean {
  if (a === null || b === null) return a === b;
  return a.length === b.length && a.every((x, k) => x === b[k]);
}

/** One text per line: empty for none, else `=` and the text with backslashes and line breaks escaped. */
function encodeText(text: string | null): string {
  if (text === null) return '';
  if (text.indexOf('\\') === -1 && text.indexOf('\n') === -1 && text.indexOf('\r') === -1) return '=' + text;
  return '=' + text.replace(/\\/g, '\\\\').replace(/\n/g, '\\n').replace(/\r/g, '\\r');
}

function parseText(s: string): string | null {
  if (s === '') return null;
  if (s.indexOf('\\') === -1) return s.slice(1);
  return s.slice(1).replace(/\\(.)/g, (_, c: string) => (c === 'n' ? '\n' : c === 'r' ? '\r' : c));
}
