/**
 * One input file as the readers see it: its first bytes for sniffing, and fresh byte or text
 * streams of its content, decompressed on the fly when the file is gzip. Readers that stream
 * (CSV, ECSV, VOTable, FITS) take their data from here, so gzip works for all of them alike.
 */
import { createReadStream } from 'node:fs';
import { open as openFile } from 'node:fs/promises';
import type { Readable } from 'node:stream';
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
  /** A fresh stream of the content as UTF-8 text (multi-byte characters never split). */
  text(chunkBytes?: number): Readable;
}

export interface SourceOptions {
  /** Most decompressed bytes a gzip input may produce; by default 200 times its size, at least 1 GiB. */
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
  const limit = inflateLimit(size, options.maxInflatedBytes);
  const bytes = (chunkBytes = READ_CHUNK_BYTES): Readable => {
    const file = createReadStream(path, { highWaterMark: Math.max(1, chunkBytes) });
    return gzip ? gunzipStream(file, path, limit) : file;
  };
  const head = gzip ? await readPrefix(bytes(1 << 16), SNIFF_BYTES) : raw;
  return {
    path,
    name,
    gzip,
    size,
    head,
    bytes,
    text(chunkBytes = READ_CHUNK_BYTES) {
      if (!gzip) return createReadStream(path, { encoding: 'utf8', highWaterMark: Math.max(1, chunkBytes) });
      return bytes(chunkBytes).setEncoding('utf8');
    },
  };
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
