/**
 * gzip-compressed inputs, decompressed as a stream. A guard stops the stream once it has produced
 * far more bytes than any real catalog compresses to (a "decompression bomb" would otherwise keep
 * the linter busy for hours), and damaged or truncated gzip data becomes one readable InputError.
 */
import { Transform, type Readable, type TransformCallback } from 'node:stream';
import { createGunzip } from 'node:zlib';
import { InputError } from './types.js';

export const GZIP_MAGIC = [0x1f, 0x8b] as const;

export function isGzip(head: Uint8Array): boolean {
  return head.length >= 2 && head[0] === GZIP_MAGIC[0] && head[1] === GZIP_MAGIC[1];
}

/**
 * Catalog text compresses by a factor of 3-20; deflate cannot exceed about 1032. A ratio past
 * this, once past the floor below, is a bomb or a pathological file, and reading stops.
 */
export const MAX_INFLATE_RATIO = 200;
/** Below this many decompressed bytes the ratio is not checked (a small, very regular file). */
export const INFLATE_FLOOR_BYTES = 1 << 30;

/** Most decompressed bytes accepted for an input of `compressedBytes` (null when unknown). */
export function inflateLimit(compressedBytes: number | null, override?: number): number {
  if (override !== undefined) return override;
  if (compressedBytes === null) return Number.MAX_SAFE_INTEGER;
  return Math.max(INFLATE_FLOOR_BYTES, MAX_INFLATE_RATIO * compressedBytes);
}

function gzipProblem(err: unknown, path: string, produced: number): InputError {
  if (err instanceof InputError) return err;
  const reason = err instanceof Error ? err.message : String(err);
  return new InputError(
    `the gzip data is damaged or truncated (${reason}) after ${produced} decompressed bytes`,
    path,
    `decompressed byte ${produced}`,
  );
}

/**
 * Pipes `compressed` through gunzip and returns the decompressed byte stream. Errors of either
 * side arrive on the returned stream as InputErrors.
 */
export function gunzipStream(compressed: Readable, path: string, limit: number): Readable {
  const gunzip = createGunzip();
  let produced = 0;
  const guard = new Transform({
    transform(chunk: Buffer, _enc: BufferEncoding, done: TransformCallback) {
      produced += chunk.length;
      if (produced > limit) {
        done(
          new InputError(
            `it decompresses to more than ${limit} bytes (over ${MAX_INFLATE_RATIO} times its compressed size); ` +
              'this looks like a damaged file or a decompression bomb, so reading stopped',
            path,
            `decompressed byte ${limit}`,
          ),
        );
        return;
      }
      done(null, chunk);
    },
  });
  const fail = (err: unknown) => {
    if (!guard.destroyed) guard.destroy(gzipProblem(err, path, produced));
  };
  compressed.on('error', fail);
  gunzip.on('error', fail);
  guard.on('close', () => {
    compressed.destroy();
    gunzip.destroy();
  });
  compressed.pipe(gunzip).pipe(guard);
  return guard;
}
