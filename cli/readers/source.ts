/**
 * One input file as the readers see it: its first bytes for sniffing, and fresh byte or text
 * streams of its content, decompressed on the fly when the file is gzip. Readers that stream
 * (CSV, ECSV, VOTable, FITS) take their data from here, so gzip works for all of them alike.
 */
import { isUtf8 } from 'node:buffer';
import { closeSync, createReadStream, openSync, readSync } from 'node:fs';
import { open as openFile } from 'node:fs/promises';
import { Transform, type Readable, type TransformCallback } from 'node:stream';
import { StringDecoder } from 'node:string_decoder';
import { describeIoError, displayName } from './common.js';
import { gunzipStream, inflateLimit, isGzip } from './gzip.js';
import { InputError } from './types.js';

/** Bytes read for sniffing: enough for an XML prolog and a comment before `<VOTABLE`. */
export const SNIFF_BYTES = 4096;
/** Bytes per read from disk. */
const READ_CHUNK_BYTES = 1 << 20;

export interface InputSource {
  readonly path: string;
  /** How messages name the input. */
  readonly name: string;
  readonly gzip: boolean;
  /** Bytes on disk (compressed bytes for gzip). */
  readonly size: number;
  /** The first SNIFF_BYTES of the content, decompressed. */
  readonly head: Uint8Array;
  /** A fresh stream of the content's bytes. */
  bytes(chunkBytes?: number): Readable;
  /**
   * How the text formats decode the content, decided from its first bytes (see detectEncoding).
   * Binary formats never look at it.
   */
  readonly encoding: TextEncoding;
  /** Why the content is not read as plain UTF-8 (a note for the user), or null when it is. */
  readonly encodingNote: string | null;
  /**
   * A fresh stream of the content as text in `encoding` (multi-byte characters never split). Bytes
   * that are not valid UTF-8 become U+FFFD, and the first of them is reported once through the
   * notes (see attachNotes), with its byte offset and line.
   */
  text(chunkBytes?: number): Readable;
  /** True when a text reader must read through text(): gzip, or an encoding other than UTF-8. */
  readonly needsDecoding: boolean;
  /**
   * Where notes found while streaming go: the reader's notes array, once the reader exists. Notes
   * from before are handed over then; only the first call counts.
   */
  attachNotes(notes: string[] | undefined): void;
}

/** What text can be read as. UTF-32 is recognised only to be refused with a clear message. */
export type TextEncoding = 'utf-8' | 'utf-16le' | 'utf-16be' | 'windows-1252' | 'utf-32le' | 'utf-32be';

export interface SourceOptions {
  /** Most decompressed bytes a gzip input may produce; by default see inflateLimit in gzip.ts. */
  maxInflatedBytes?: number;
}

export async function openSource(path: string, options: SourceOptions = {}): Promise<InputSource> {
  const name = displayName(path);
  let size: number;
  let raw: Uint8Array;
  let handle;
  try {
    handle = await openFile(path, 'r');
    size = (await handle.stat()).size;
    const buf = Buffer.alloc(SNIFF_BYTES);
    const { bytesRead } = await handle.read(buf, 0, SNIFF_BYTES, 0);
    raw = buf.subarray(0, bytesRead);
  } catch (err) {
    throw new InputError(`cannot read ${path}: ${describeIoError(err)}`, path);
  } finally {
    await handle?.close().catch(() => undefined);
  }
  const gzip = isGzip(raw);
  // Only gzip has a limit (and only then may a bad STARSIEVE_MAX_INFLATED_BYTES stop the run).
  const limit = gzip ? inflateLimit(size, options.maxInflatedBytes) : 0;
  const bytes = (chunkBytes = READ_CHUNK_BYTES): Readable => {
    const file = createReadStream(path, { highWaterMark: Math.max(1, chunkBytes) });
    return gzip ? gunzipStream(file, path, limit) : file;
  };
  const head = gzip ? await readPrefix(bytes(1 << 16), SNIFF_BYTES) : raw;
  const complete = gzip ? head.length < SNIFF_BYTES : size <= SNIFF_BYTES;
  const { encoding, note } = detectEncoding(head, complete);
  let notes: string[] | null = null;
  const early: string[] = [];
  const addNote = (m: string) => (notes ?? early).push(m);
  return {
    path,
    name,
    gzip,
    size,
    head,
    bytes,
    encoding,
    encodingNote: note,
    needsDecoding: gzip || encoding !== 'utf-8',
    text(chunkBytes = READ_CHUNK_BYTES) {
      const raw = bytes(chunkBytes);
      // A plain file can be read again to find a bad byte's line; a gzip stream counts as it goes.
      const decoder = encoding !== 'utf-8' ? new OtherText(encoding) : new Utf8Text(addNote, gzip ? null : (offset) => lineInFile(path, offset));
      // Errors of the byte stream (gzip damage, I/O) must reach whoever reads the text.
      raw.on('error', (err) => decoder.destroy(err));
      decoder.on('close', () => raw.destroy());
      return raw.pipe(decoder);
    },
    attachNotes(target) {
      if (notes !== null || target === undefined) return;
      notes = target;
      target.push(...early);
      early.length = 0;
    },
  };
}

// ---- encodings -------------------------------------------------------------------------------

/**
 * The encoding of text from its first bytes. A byte-order mark decides; without one, UTF-16 shows
 * as a NUL in every other byte (catalog text is nearly all ASCII), and bytes that are not valid
 * UTF-8 mean a single-byte code page, almost always Windows-1252 / Latin-1 from a spreadsheet.
 * Everything else is UTF-8 (ASCII included). `complete` says the head is the whole content.
 */
export function detectEncoding(head: Uint8Array, complete: boolean): { encoding: TextEncoding; note: string | null } {
  const b = head;
  if (b.length >= 4 && b[0] === 0xff && b[1] === 0xfe && b[2] === 0 && b[3] === 0) return { encoding: 'utf-32le', note: 'UTF-32 (little-endian byte-order mark)' };
  if (b.length >= 4 && b[0] === 0 && b[1] === 0 && b[2] === 0xfe && b[3] === 0xff) return { encoding: 'utf-32be', note: 'UTF-32 (big-endian byte-order mark)' };
  if (b.length >= 3 && b[0] === 0xef && b[1] === 0xbb && b[2] === 0xbf) return { encoding: 'utf-8', note: null };
  if (b.length >= 2 && b[0] === 0xff && b[1] === 0xfe) return { encoding: 'utf-16le', note: 'read as UTF-16 little-endian (it starts with that byte-order mark)' };
  if (b.length >= 2 && b[0] === 0xfe && b[1] === 0xff) return { encoding: 'utf-16be', note: 'read as UTF-16 big-endian (it starts with that byte-order mark)' };
  const pairs = b.length >> 1;
  if (pairs >= 2) {
    let zeroEven = 0;
    let zeroOdd = 0;
    for (let i = 0; i + 1 < b.length; i += 2) {
      if (b[i] === 0) zeroEven++;
      if (b[i + 1] === 0) zeroOdd++;
    }
    // ASCII in UTF-16 puts a NUL in one half of nearly every pair and almost never in the other.
    if (zeroOdd >= 0.4 * pairs && zeroEven <= 0.02 * pairs) return { encoding: 'utf-16le', note: 'read as UTF-16 little-endian (no byte-order mark, but every other byte is NUL)' };
    if (zeroEven >= 0.4 * pairs && zeroOdd <= 0.02 * pairs) return { encoding: 'utf-16be', note: 'read as UTF-16 big-endian (no byte-order mark, but every other byte is NUL)' };
  }
  const whole = complete ? b : b.subarray(0, completeUtf8Length(b));
  if (!isUtf8(whole)) {
    const at = firstInvalidUtf8(whole);
    return {
      encoding: 'windows-1252',
      note:
        `not valid UTF-8 (byte ${at}, on line ${linesBefore(whole, at)}, cannot be UTF-8), so it was read as Windows-1252 / Latin-1; ` +
        'if it uses another code page, convert it to UTF-8 first (iconv -f <code page> -t UTF-8)',
    };
  }
  return { encoding: 'utf-8', note: null };
}

/** Length of the prefix that ends on a character boundary (a cut multi-byte sequence left off). */
export function completeUtf8Length(b: Uint8Array): number {
  const n = b.length;
  for (let i = n - 1; i >= 0 && i >= n - 3; i--) {
    const c = b[i];
    if ((c & 0xc0) === 0x80) continue;
    if (c < 0xc0) return n;
    const need = c >= 0xf0 ? 4 : c >= 0xe0 ? 3 : 2;
    return n - i < need ? i : n;
  }
  return n;
}

/** Offset of the first byte that breaks UTF-8 (the caller knows there is one). */
export function firstInvalidUtf8(b: Uint8Array): number {
  // Halving on isUtf8 of prefixes: a prefix that is invalid holds the first bad byte.
  let lo = 0;
  let hi = b.length;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (isUtf8(b.subarray(0, completeUtf8Length(b.subarray(0, mid))))) lo = mid;
    else hi = mid;
  }
  return completeUtf8Length(b.subarray(0, lo));
}

/** 1-based line of byte `at`. */
function linesBefore(b: Uint8Array, at: number): number {
  let line = 1;
  for (let i = 0; i < at; i++) if (b[i] === 10) line++;
  return line;
}

/**
 * UTF-8 bytes to text, watching for bytes that are not UTF-8: the first is reported once (they
 * still become U+FFFD, as any decoder makes them, but the user hears where the damage starts).
 * isUtf8 checks a megabyte in well under a millisecond, so the watch costs next to nothing.
 * Lines are counted as the bytes pass only where asked (a stream that cannot be read again);
 * otherwise `lineOf` finds the line once, should a bad byte turn up.
 */
class Utf8Text extends Transform {
  private readonly decoder = new StringDecoder('utf8');
  private carry: Uint8Array = new Uint8Array(0);
  private offset = 0;
  private line = 1;
  private reported = false;

  constructor(
    private readonly note: (m: string) => void,
    private readonly lineOf: ((offset: number) => number | null) | null = null,
  ) {
    super({ decodeStrings: true, encoding: 'utf8' });
  }

  override _transform(chunk: Buffer, _enc: BufferEncoding, done: TransformCallback): void {
    if (!this.reported) this.check(chunk, false);
    done(null, this.decoder.write(chunk));
  }

  override _flush(done: TransformCallback): void {
    if (!this.reported) this.check(new Uint8Array(0), true);
    done(null, this.decoder.end());
  }

  private check(chunk: Uint8Array, final: boolean): void {
    const all = this.carry.length === 0 ? chunk : Buffer.concat([this.carry, chunk]);
    const cut = final ? all.length : completeUtf8Length(all);
    const part = all.subarray(0, cut);
    if (isUtf8(part)) {
      if (this.lineOf === null) for (let i = part.indexOf(10); i !== -1; i = part.indexOf(10, i + 1)) this.line++;
      this.offset += part.length;
      this.carry = all.slice(cut);
      return;
    }
    const at = this.offset + firstInvalidUtf8(part);
    const line = this.lineOf === null ? this.line + linesBefore(part, at - this.offset) - 1 : this.lineOf(at);
    this.reported = true;
    this.carry = new Uint8Array(0);
    this.note(
      `not valid UTF-8 from byte ${at}${line === null ? '' : ` (line ${line})`}; such bytes were read as U+FFFD, ` +
        'so text there is damaged: convert the file to UTF-8 first (iconv -f <code page> -t UTF-8)',
    );
  }
}

/**
 * A file as UTF-8 text for the CSV reader, with the watch for bytes that are not UTF-8 (see
 * Utf8Text); `bytesRead` counts the file's bytes, for the progress line.
 */
export function utf8FileStream(path: string, highWaterMark: number, note: (m: string) => void): Readable & { readonly bytesRead: number } {
  const file = createReadStream(path, { highWaterMark: Math.max(1, highWaterMark) });
  const text = new Utf8Text(note, (offset) => lineInFile(path, offset));
  file.on('error', (err) => text.destroy(err));
  text.on('close', () => file.destroy());
  Object.defineProperty(text, 'bytesRead', { get: () => file.bytesRead });
  return file.pipe(text) as Utf8Text & { readonly bytesRead: number };
}

/** 1-based line of byte `offset` of a file, by reading up to it once; null if the file cannot be read. */
function lineInFile(path: string, offset: number): number | null {
  let fd: number | null = null;
  try {
    fd = openSync(path, 'r');
    const buf = Buffer.alloc(1 << 20);
    let line = 1;
    for (let pos = 0; pos < offset; ) {
      const n = readSync(fd, buf, 0, Math.min(buf.length, offset - pos), pos);
      if (n <= 0) break;
      for (let i = buf.indexOf(10); i !== -1 && i < n; i = buf.indexOf(10, i + 1)) line++;
      pos += n;
    }
    return line;
  } catch {
    return null;
  } finally {
    if (fd !== null) closeSync(fd);
  }
}

/** UTF-16 and Windows-1252 through TextDecoder (which drops a byte-order mark). */
class OtherText extends Transform {
  private readonly decoder: TextDecoder;
  constructor(encoding: TextEncoding) {
    super({ decodeStrings: true, encoding: 'utf8' });
    this.decoder = new TextDecoder(encoding);
  }
  override _transform(chunk: Buffer, _enc: BufferEncoding, done: TransformCallback): void {
    done(null, this.decoder.decode(chunk, { stream: true }));
  }
  override _flush(done: TransformCallback): void {
    done(null, this.decoder.decode());
  }
}

/** Up to `n` bytes from the start of a stream, which is then closed; damaged data gives what came before. */
async function readPrefix(stream: Readable, n: number): Promise<Uint8Array> {
  const parts: Buffer[] = [];
  let got = 0;
  try {
    for await (const chunk of stream) {
      parts.push(chunk as Buffer);
      got += (chunk as Buffer).length;
      if (got >= n) break;
    }
  } catch {
    // The reader meets the same damage again and reports it with its position.
  } finally {
    stream.destroy();
  }
  return Buffer.concat(parts).subarray(0, n);
}

/** Runs a reader's open step; on failure the reader is closed (its stream released) before the error goes on. */
export async function opened<R extends { open(): Promise<void>; close(): Promise<void> }>(reader: R): Promise<R> {
  try {
    await reader.open();
  } catch (err) {
    await reader.close();
    throw err;
  }
  return reader;
}
