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
 * Catalog text compresses by a factor of 3-20 (common practice; the demo catalog gives 4); deflate
 * cannot exceed about 1032. A ratio past this, once past the floor below, is a bomb or a
 * pathological file, and reading stops.
 */
export const MAX_INFLATE_RATIO = 200;
/** Up to this many decompressed bytes the ratio is not checked (a small, very regular file). */
export const INFLATE_FLOOR_BYTES = 64 * 1024 * 1024;
/** Environment variable that sets the limit in bytes (suffixes k, M, G, T: powers of 1024), or `off`. */
export const INFLATE_LIMIT_ENV = 'STARSIEVE_MAX_INFLATED_BYTES';

/**
 * Most decompressed bytes accepted for an input of `compressedBytes` (null when unknown): the
 * option if given, else the environment variable, else the larger of the floor and
 * MAX_INFLATE_RATIO times the compressed size.
 */
export function inflateLimit(compressedBytes: number | null, override?: number, env = process.env[INFLATE_LIMIT_ENV]): number {
  if (override !== undefined) return override;
  if (env !== undefined && env.trim() !== '') return parseByteSize(env);
  if (compressedBytes === null) return Number.MAX_SAFE_INTEGER;
  return Math.max(INFLATE_FLOOR_BYTES, MAX_INFLATE_RATIO * compressedBytes);
}

const SUFFIX: Readonly<Record<string, number>> = { '': 1, k: 2 ** 10, m: 2 ** 20, g: 2 ** 30, t: 2 ** 40 };

/** `500M`, `4G`, `1048576`, `off`; anything else is a one-line error naming the variable. */
export function parseByteSize(text: string): number {
  const t = text.trim().toLowerCase();
  if (t === 'off' || t === 'none' || t === 'unlimited') return Number.MAX_SAFE_INTEGER;
  const m = /^(\d+(?:\.\d+)?)\s*([kmgt]?)i?b?$/.exec(t);
  if (!m) {
    throw new InputError(`${INFLATE_LIMIT_ENV}=${JSON.stringify(text)} is not a size; give bytes such as 4G, 500M or 1048576, or off`, INFLATE_LIMIT_ENV);
  }
  return Math.floor(Number(m[1]) * SUFFIX[m[2]]);
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
            `it decompresses to more than ${limit} bytes (the limit is the larger of ${INFLATE_FLOOR_BYTES >> 20} MiB and ` +
              `${MAX_INFLATE_RATIO} times the compressed size, unless ${INFLATE_LIMIT_ENV} sets it); this looks like a damaged file ` +
              `or a decompression bomb, so reading stopped (if the file is genuine, allow more with e.g. ${INFLATE_LIMIT_ENV}=8G)`,
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
