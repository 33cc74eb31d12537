/**
 * The benchmark's catalogs: CSV and Arrow from the sample generator, and Parquet written from the
 * Arrow file, cached in /tmp/starsieve-bench so repeated runs skip the generation.
 */
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, renameSync, statSync } from 'node:fs';
import { open, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { RecordBatchReader, Table, tableToIPC } from 'apache-arrow';
import { makeSamples } from '../../sample-catalogs/make-samples.js';

export const CACHE_DIR = join(tmpdir(), 'starsieve-bench');
const GENERATOR = resolve(import.meta.dirname, '../../sample-catalogs/make-samples.ts');

export interface BenchCatalog {
  rows: number;
  seed: number;
  csv: string;
  arrow: string;
  parquet: string;
  truth: string;
  /** Bytes of each file, for MB/s. */
  bytes: { csv: number; arrow: number; parquet: number };
}

/**
 * The cache key holds the rows, the seed and a digest of the generator's source, so a changed
 * generator never serves a stale catalog under the old name.
 */
function prefixFor(rows: number, seed: number): string {
  const digest = createHash('sha256').update(readFileSync(GENERATOR)).digest('hex').slice(0, 8);
  return join(CACHE_DIR, `tw-r${rows}-s${seed}-g${digest}`);
}

/**
 * Parquet from the Arrow file, one record batch at a time through parquet-wasm's streaming writer,
 * so a 10M-row catalog never sits whole in memory. ZSTD and 100k-row groups, as
 * sample-catalogs/convert-formats.ts writes Parquet.
 */
export async function writeParquetFromArrow(arrowPath: string, parquetPath: string): Promise<void> {
  const pw = await import('parquet-wasm/node');
  const props = new pw.WriterPropertiesBuilder().setCompression(pw.Compression.ZSTD).setMaxRowGroupSize(100_000).build();
  const handle = await open(arrowPath, 'r');
  try {
    const reader = await RecordBatchReader.from(handle);
    await reader.open();
    const batches = reader[Symbol.asyncIterator]();
    const source = new ReadableStream({
      async pull(controller) {
        const next = await batches.next();
        if (next.done) {
          controller.close();
          return;
        }
        // One JS batch as an IPC stream, read back on the wasm side.
        const wasmTable = pw.Table.fromIPCStream(tableToIPC(new Table([next.value]), 'stream'));
        for (const b of wasmTable.recordBatches()) controller.enqueue(b);
      },
    });
    const bytes = await pw.transformParquetStream(source, props);
    const tmp = `${parquetPath}.${process.pid}.tmp`;
    await writeFile(tmp, bytes as unknown as AsyncIterable<Uint8Array>);
    renameSync(tmp, parquetPath);
  } finally {
    await handle.close();
  }
}

/** The catalog of `rows` rows for `seed`, made (with planted errors) when not cached. */
export async function ensureCatalog(rows: number, seed: number, log: (s: string) => void): Promise<BenchCatalog> {
  mkdirSync(CACHE_DIR, { recursive: true });
  const prefix = prefixFor(rows, seed);
  const files = { csv: `${prefix}.csv`, arrow: `${prefix}.arrow`, parquet: `${prefix}.parquet`, truth: `${prefix}.truth.json` };
  if (!existsSync(files.csv) || !existsSync(files.arrow) || !existsSync(files.truth)) {
    log(`generating ${rows.toLocaleString('en-US')} rows (seed ${seed}) into ${CACHE_DIR} ...`);
    const t0 = performance.now();
    await makeSamples({ rows, seed, out: prefix, plant: true });
    log(`  made CSV and Arrow in ${((performance.now() - t0) / 1000).toFixed(1)} s`);
  }
  if (!existsSync(files.parquet)) {
    log('writing Parquet from the Arrow file ...');
    const t0 = performance.now();
    await writeParquetFromArrow(files.arrow, files.parquet);
    log(`  made Parquet in ${((performance.now() - t0) / 1000).toFixed(1)} s`);
  }
  return {
    rows,
    seed,
    ...files,
    bytes: { csv: statSync(files.csv).size, arrow: statSync(files.arrow).size, parquet: statSync(files.parquet).size },
  };
}
