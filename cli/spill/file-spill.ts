/**
 * The spill store of a real run: each partition of a log is two temporary files, one of float64
 * records and one of their texts (one per line), appended to in buffered blocks so that
 * memory holds at most one block per partition. The files live in one folder per input under
 * the system's temporary folder (or STARSIEVE_TMPDIR) and are removed when the log is closed,
 * and at exit for runs that stop early.
 */
import { appendFileSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type { SpillLog, SpillStore } from '../../rules/engine/spill.js';

/** Bytes of records buffered per partition before they are appended to its file. */
const BLOCK_BYTES = 64 * 1024;

const live = new Set<string>();
let hooked = false;

function removeAll(): void {
  for (const dir of live) rmSync(dir, { recursive: true, force: true });
  live.clear();
}

export class FileSpill implements SpillStore {
  open(width: number, partitions: number): SpillLog {
    if (!hooked) {
      hooked = true;
      process.once('exit', removeAll);
    }
    const dir = mkdtempSync(join(process.env.STARSIEVE_TMPDIR || tmpdir(), 'starsieve-spill-'));
    live.add(dir);
    return new FileLog(dir, width, partitions);
  }
}

/** The store every run of the command line uses. */
export const FILE_SPILL = new FileSpill();

class FileLog implements SpillLog {
  private readonly buffers: Float64Array[];
  private readonly filled: Int32Array;
  private readonly textBuffers: string[][];
  private readonly capacity: number;
  private readonly written: Uint8Array;

  constructor(
    private readonly dir: string,
    readonly width: number,
    readonly partitions: number,
  ) {
    this.capacity = Math.max(1, Math.floor(BLOCK_BYTES / 8 / width)) * width;
    this.buffers = Array.from({ length: partitions }, () => new Float64Array(0));
    this.filled = new Int32Array(partitions);
    this.textBuffers = Array.from({ length: partitions }, () => []);
    this.written = new Uint8Array(partitions);
  }

  append(partition: number, record: ArrayLike<number>, text: string | null = null): void {
    let buf = this.buffers[partition];
    // Blocks are allocated on first use, so an unused partition costs nothing.
    if (buf.length === 0) buf = this.buffers[partition] = new Float64Array(this.capacity);
    let at = this.filled[partition];
    for (let k = 0; k < this.width; k++) buf[at++] = record[k];
    this.filled[partition] = at;
    this.textBuffers[partition].push(encodeText(text));
    if (at === buf.length) this.flush(partition);
  }

  private path(partition: number, kind: 'rec' | 'txt'): string {
    return join(this.dir, `${partition}.${kind}`);
  }

  private flush(partition: number): void {
    const n = this.filled[partition];
    if (n === 0) return;
    const b = this.buffers[partition];
    appendFileSync(this.path(partition, 'rec'), new Uint8Array(b.buffer, b.byteOffset, n * 8));
    appendFileSync(this.path(partition, 'txt'), this.textBuffers[partition].join('\n') + '\n');
    this.filled[partition] = 0;
    this.textBuffers[partition] = [];
    this.written[partition] = 1;
  }

  take(partition: number): { records: Float64Array; texts: (string | null)[] } {
    if (!this.written[partition]) {
      const n = this.filled[partition];
      const out = { records: this.buffers[partition].slice(0, n), texts: this.textBuffers[partition].map(parseText) };
      this.filled[partition] = 0;
      this.textBuffers[partition] = [];
      this.buffers[partition] = new Float64Array(0);
      return out;
    }
    this.flush(partition);
    this.buffers[partition] = new Float64Array(0);
    const bytes = readFileSync(this.path(partition, 'rec'));
    // A fresh, aligned copy: a Buffer from readFileSync may start at any byte offset.
    const records = new Float64Array(bytes.byteLength / 8);
    new Uint8Array(records.buffer).set(bytes);
    const lines = readFileSync(this.path(partition, 'txt'), 'utf8').split('\n');
    lines.pop();
    rmSync(this.path(partition, 'rec'), { force: true });
    rmSync(this.path(partition, 'txt'), { force: true });
    this.written[partition] = 0;
    return { records, texts: lines.map(parseText) };
  }

  close(): void {
    rmSync(this.dir, { recursive: true, force: true });
    live.delete(this.dir);
  }
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
