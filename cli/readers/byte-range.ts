/**
 * One CSV file read in byte ranges that start at line boundaries, for threads and for shards of
 * a single file. Each range is read as its own small CSV: the file's header lines, then the
 * range's bytes. Its physical lines are numbered as in the file (the line ends before the range are
 * counted: by the planner as it scans, by a shard over the bytes before its range), so messages
 * that name a line are right as they are made; its rows are numbered from the range's start, and
 * the rows of the ranges before it turn them into rows of the whole file (RowShift).
 *
 * A boundary must not fall inside a quoted field. A quote toggles the quoted state, so a range
 * whose bytes hold an odd number of quotes ends inside one: the run over that range stops with an
 * error rather than misread the next. The threads' planner scans the whole file first and moves
 * boundaries to newlines where the count is even; a shard checks only its own range.
 */
import { isUtf8 } from 'node:buffer';
import { open as openFile, type FileHandle } from 'node:fs/promises';
import { Readable } from 'node:stream';
import { StringDecoder } from 'node:string_decoder';
import { describeIoError, displayName } from './common.js';
import { CsvReader, openCsv, type BlankLines, type CsvOptions } from './csv.js';
import { InputError, type CatalogReader } from './types.js';

const NL = 10;
const CR = 13;
const QUOTE = 34;
const CHUNK = 4 << 20;
/** The header (with comment lines above it) must end within this many bytes for a file to be split. */
const MAX_HEADER_BYTES = 1 << 20;

/** Bytes [start, end) of a file; `linesBefore`: line ends between the data's start and `start`. */
export interface ByteRange {
  start: number;
  end: number;
  linesBefore: number;
}

/** Where the data of a CSV file begins: the bytes of its header lines, and how many lines they are. */
export interface CsvLayout {
  path: string;
  size: number;
  dataStart: number;
  headerLines: number;
  delimiter: string;
}

/** What a range's reader counted that a whole read reports once: the blank lines inside the data. */
export interface RangeCounts {
  blanks: BlankLines;
}

async function withFile<T>(path: string, f: (h: FileHandle) => Promise<T>): Promise<T> {
  let h: FileHandle | undefined;
  try {
    h = await openFile(path, 'r');
    return await f(h);
  } catch (err) {
    if (err instanceof InputError) throw err;
    throw new InputError(`cannot read ${path}: ${describeIoError(err)}`, path);
  } finally {
    await h?.close().catch(() => undefined);
  }
}

/**
 * The layout of a plain CSV file, from a reader opened on it the usual way (it has read the
 * header), or null when the file cannot be split: not a CSV reader, a header that spans more
 * than MAX_HEADER_BYTES, or line ends other than LF and CRLF in the header.
 */
export async function csvLayout(reader: CatalogReader): Promise<CsvLayout | null> {
  if (!(reader instanceof CsvReader) || !reader.readsFileBytes()) return null;
  const headerLines = reader.dataStartLine() - 1;
  return withFile(reader.path, async (h) => {
    const size = (await h.stat()).size;
    const head = Buffer.alloc(Math.min(size, MAX_HEADER_BYTES));
    const { bytesRead } = await h.read(head, 0, head.length, 0);
    let pos = 0;
    for (let n = 0; n < headerLines; n++) {
      const nl = head.indexOf(NL, pos);
      if (nl === -1 || nl >= bytesRead) return null;
      pos = nl + 1;
    }
    if (hasLoneCr(head.subarray(0, pos))) return null;
    return { path: reader.path, size, dataStart: pos, headerLines, delimiter: reader.delimiterUsed() };
  });
}

function hasLoneCr(b: Uint8Array, next = -1): boolean {
  for (let i = b.indexOf(CR); i !== -1; i = b.indexOf(CR, i + 1)) {
    const after = i + 1 < b.length ? b[i + 1] : next;
    if (after !== NL) return true;
  }
  return false;
}

function countByte(b: Buffer, byte: number): number {
  let n = 0;
  for (let i = b.indexOf(byte); i !== -1; i = b.indexOf(byte, i + 1)) n++;
  return n;
}

/**
 * Up to `parts` ranges of about equal size covering the data of the file, cut after newlines
 * where no quoted field is open; null when the file cannot be split safely: it is not valid UTF-8
 * (a range could not say where the first bad byte is), it has lone CR line ends (lines would not
 * be counted right), or fewer than two ranges result. One pass over the file, at read speed.
 */
export async function planRanges(layout: CsvLayout, parts: number): Promise<ByteRange[] | null> {
  const { dataStart, size } = layout;
  if (parts < 2 || size - dataStart < parts) return null;
  const targets = Array.from({ length: parts - 1 }, (_, k) => dataStart + Math.floor(((k + 1) * (size - dataStart)) / parts));
  const cuts: number[] = [];
  const linesAt: number[] = [];
  const ok = await withFile(layout.path, async (h) => {
    const buf = Buffer.alloc(CHUNK);
    let quotes = 0;
    let newlines = 0;
    let carry: Buffer = Buffer.alloc(0);
    let pendingCr = false;
    for (let pos = dataStart; pos < size; ) {
      const { bytesRead } = await h.read(buf, 0, Math.min(CHUNK, size - pos), pos);
      if (bytesRead <= 0) break;
      const b = buf.subarray(0, bytesRead);
      // A character may straddle chunks: check UTF-8 up to the last ASCII byte, carry the rest over.
      let ascii = b.length - 1;
      while (ascii >= 0 && b[ascii] >= 0x80) ascii--;
      const whole = carry.length ? Buffer.concat([carry, b.subarray(0, ascii + 1)]) : b.subarray(0, ascii + 1);
      if (!isUtf8(whole)) return false;
      carry = Buffer.from(b.subarray(ascii + 1));
      if (pendingCr && b[0] !== NL) return false;
      if (hasLoneCr(b, NL)) return false;
      pendingCr = b[b.length - 1] === CR;
      // Boundaries inside this chunk: the first newline at or after each target with no quote open.
      let from = 0;
      while (cuts.length < targets.length) {
        const target = Math.max(targets[cuts.length], cuts.length ? cuts[cuts.length - 1] : 0);
        if (target >= pos + bytesRead) break;
        let nl = b.indexOf(NL, Math.max(from, target - pos));
        // Quotes up to each candidate line end, counted on from the last one tried.
        let open = nl === -1 ? 0 : quotes + countByte(b.subarray(0, nl), QUOTE);
        while (nl !== -1 && open % 2 === 1) {
          const next = b.indexOf(NL, nl + 1);
          if (next !== -1) open += countByte(b.subarray(nl, next), QUOTE);
          nl = next;
        }
        if (nl === -1) break;
        cuts.push(pos + nl + 1);
        linesAt.push(newlines + countByte(b.subarray(0, nl + 1), NL));
        from = nl + 1;
      }
      quotes += countByte(b, QUOTE);
      newlines += countByte(b, NL);
      pos += bytesRead;
    }
    return carry.length === 0 || isUtf8(carry);
  });
  if (!ok) return null;
  const starts = [dataStart, ...cuts.filter((c) => c < size)];
  const lines = [0, ...linesAt];
  const ranges: ByteRange[] = [];
  for (let k = 0; k < starts.length; k++) {
    const end = k + 1 < starts.length ? starts[k + 1] : size;
    if (end > starts[k]) ranges.push({ start: starts[k], end, linesBefore: lines[k] });
  }
  return ranges.length >= 2 ? ranges : null;
}

/** The first byte after the first newline at or after `at`, or `size` when there is none. */
async function lineStartFrom(h: FileHandle, at: number, size: number): Promise<number> {
  const buf = Buffer.alloc(1 << 16);
  for (let pos = at; pos < size; ) {
    const { bytesRead } = await h.read(buf, 0, Math.min(buf.length, size - pos), pos);
    if (bytesRead <= 0) break;
    const nl = buf.subarray(0, bytesRead).indexOf(NL);
    if (nl !== -1) return pos + nl + 1;
    pos += bytesRead;
  }
  return size;
}

/**
 * Shard k (0-based) of n of the file's data: cut where the planner would aim, at the next newline,
 * without reading the rest of the file. Every shard computes the same cuts, so the shards cover the
 * data exactly once; whether a cut falls inside a quoted field is checked as the range is read.
 */
export async function shardRange(layout: CsvLayout, k: number, n: number): Promise<ByteRange> {
  const { dataStart, size } = layout;
  const cut = (j: number) => (j <= 0 ? dataStart : j >= n ? size : null);
  return withFile(layout.path, async (h) => {
    const at = async (j: number) => cut(j) ?? Math.max(dataStart, await lineStartFrom(h, dataStart + Math.floor((j * (size - dataStart)) / n), size));
    const start = await at(k);
    const end = Math.max(start, await at(k + 1));
    return { start, end, linesBefore: await newlinesIn(h, dataStart, start) };
  });
}

/**
 * Line ends in bytes [from, to): what a shard reads before its range so its line numbers are
 * those of the file (a pass over the bytes before it, at read speed, nothing parsed).
 */
async function newlinesIn(h: FileHandle, from: number, to: number): Promise<number> {
  const buf = Buffer.alloc(CHUNK);
  let n = 0;
  for (let pos = from; pos < to; ) {
    const { bytesRead } = await h.read(buf, 0, Math.min(CHUNK, to - pos), pos);
    if (bytesRead <= 0) break;
    n += countByte(buf.subarray(0, bytesRead), NL);
    pos += bytesRead;
  }
  return n;
}

/**
 * The bytes a range reader parses: the header lines, then the range. Counts the range's quotes,
 * and refuses lone CR line ends, as it goes.
 */
function rangeBytes(layout: CsvLayout, range: ByteRange, chunkBytes: number): Readable {
  const name = displayName(layout.path);
  async function* generate(): AsyncGenerator<string> {
    const decoder = new StringDecoder('utf8');
    let quotes = 0;
    let prev = -1;
    const h = await openFile(layout.path, 'r');
    try {
      const head = Buffer.alloc(layout.dataStart);
      if (layout.dataStart > 0) await h.read(head, 0, layout.dataStart, 0);
      yield decoder.write(head);
      const buf = Buffer.alloc(Math.max(1, chunkBytes));
      for (let pos = range.start; pos < range.end; ) {
        const { bytesRead } = await h.read(buf, 0, Math.min(buf.length, range.end - pos), pos);
        if (bytesRead <= 0) break;
        const b = buf.subarray(0, bytesRead);
        quotes += countByte(b, QUOTE);
        if ((prev === CR && b[0] !== NL) || hasLoneCr(b, NL)) {
          throw new InputError(`${name}: a lone CR line end near byte ${pos}; a file with CR-only line ends cannot be read in byte ranges (shard it by file)`, layout.path, `byte ${pos}`);
        }
        prev = b[b.length - 1];
        pos += bytesRead;
        yield decoder.write(b);
      }
      const rest = decoder.end();
      if (rest) yield rest;
      if (quotes % 2 === 1) {
        throw new InputError(
          `${name}: the byte range ${range.start}-${range.end} ends inside a quoted field (a quoted value spans lines across the cut); check this file in one piece or shard it by file`,
          layout.path,
          `byte ${range.end}`,
        );
      }
    } finally {
      await h.close();
    }
  }
  return Readable.from(generate(), { objectMode: true });
}

export interface RangeReader {
  reader: CatalogReader;
  /** Final once the reader's batches are exhausted. */
  counts: RangeCounts;
}

/** A CSV reader over one byte range: rows numbered from the range's start, lines as in the file. */
export async function openCsvRange(layout: CsvLayout, range: ByteRange, options: CsvOptions = {}): Promise<RangeReader> {
  const counts: RangeCounts = { blanks: { count: 0, firstLine: 0 } };
  const reader = (await openCsv(layout.path, {
    ...options,
    delimiter: layout.delimiter,
    quietBlankLines: true,
    linesSkipped: range.linesBefore,
    textStream: rangeBytes(layout, range, options.readChunkBytes ?? 1 << 20),
  })) as CsvReader;
  const batches = reader.batches.bind(reader);
  // The blank-line count is final only once every batch has been read.
  reader.batches = async function* () {
    yield* batches();
    counts.blanks = reader.blanks();
  };
  return { reader, counts };
}
