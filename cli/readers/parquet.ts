/**
 * Apache Parquet, read with hyparquet (pure JavaScript) and the codecs of hyparquet-compressors
 * (SNAPPY, GZIP, ZSTD, BROTLI, LZ4). The file is read row group by row group; the first batch,
 * which the binder samples, holds every column, and once the binding is known only the columns
 * the rules read are decoded (`selectColumns`). Units and UCDs come from the field metadata of
 * an embedded Arrow schema (pyarrow, arrow-rs) or from astropy's ECSV-style `table_meta_yaml`.
 * 64-bit integers stay exact as text (survey source ids), as in the Arrow reader.
 */
import { RecordBatchReader } from 'apache-arrow';
import { asyncBufferFromFile, parquetMetadataAsync, parquetScan, parquetSchema } from 'hyparquet';
import type { AsyncBuffer, DecodedArray, FileMetaData, ParquetScan, SchemaTree } from 'hyparquet';
import { compressors } from 'hyparquet-compressors';
import { open } from 'node:fs/promises';
import { batchSizeOf, describeIoError, uniqueColumnNames } from './common.js';
import { ecsvUnit } from './ecsv.js';
import { Selection, skippedColumn, type ColumnProjection } from './projection.js';
import type { InputSource } from './source.js';
import { InputError, type CatalogReader, type ColumnMeta, type RawBatch, type RawColumn, type ReaderOptions, type ReaderStats } from './types.js';
import { parseYaml } from './yaml-text.js';

export const PARQUET_MAGIC = [0x50, 0x41, 0x52, 0x31]; // "PAR1"

type Kind = 'number' | 'text';

interface Leaf {
  /** The name hyparquet reads the column by. */
  key: string;
  kind: Kind;
}

interface DeclaredMeta {
  unit: string | null;
  ucd: string | null;
  description: string | null;
}

export async function openParquet(src: InputSource, options: ReaderOptions = {}): Promise<CatalogReader> {
  await checkFooter(src);
  let file: AsyncBuffer;
  let metadata: FileMetaData;
  try {
    file = await asyncBufferFromFile(src.path);
    metadata = await parquetMetadataAsync(file);
  } catch (err) {
    throw damaged(src, err, 'its footer (metadata)');
  }
  const reader = new ParquetReader(src, file, metadata, options);
  await reader.open();
  return reader;
}

/** A Parquet file starts and ends with PAR1; without the closing one the footer is gone. */
async function checkFooter(src: InputSource): Promise<void> {
  const handle = await open(src.path, 'r').catch((err) => {
    throw new InputError(`cannot read ${src.name}: ${describeIoError(err)}`, src.path);
  });
  try {
    const tail = Buffer.alloc(4);
    if (src.size >= 12) await handle.read(tail, 0, 4, src.size - 4);
    if (src.size < 12 || tail.toString('latin1') !== 'PAR1') {
      throw new InputError(
        `${src.name}: truncated or damaged Parquet file: it is ${src.size} bytes and does not end with PAR1, so its footer is missing`,
        src.path,
        `byte ${src.size}`,
      );
    }
  } finally {
    await handle.close();
  }
}

function damaged(src: InputSource, err: unknown, what: string, position: string | null = null): InputError {
  if (err instanceof InputError) return err;
  const reason = err instanceof Error ? err.message : String(err);
  return new InputError(`${src.name}: cannot read ${what} (damaged Parquet file?): ${reason}`, src.path, position);
}

class ParquetReader implements CatalogReader, ColumnProjection {
  readonly format = 'parquet';
  readonly path: string;
  columns: ColumnMeta[] = [];
  readonly stats: ReaderStats = { records: 0, rows: 0, unparseable: 0 };

  progress(): { done: number; total: number; unit: 'rows' } {
    return { done: this.stats.rows, total: Number(this.metadata.num_rows), unit: 'rows' };
  }
  readonly notes: string[] = [];

  private readonly batchSize: number;
  private leaves: Leaf[] = [];
  private scan: ParquetScan | null = null;
  private selection = new Selection(0);
  private started = false;

  constructor(
    private readonly src: InputSource,
    private readonly file: AsyncBuffer,
    private readonly metadata: FileMetaData,
    options: ReaderOptions,
  ) {
    this.path = src.path;
    this.batchSize = batchSizeOf(options.batchSize);
  }

  async open(): Promise<void> {
    const tree = parquetSchema(this.metadata);
    const declared = this.declaredMeta();
    const kept: { leaf: Leaf; meta: Omit<ColumnMeta, 'name'> }[] = [];
    tree.children.forEach((child, i) => {
      const name = child.element.name;
      const why = unsupported(child);
      if (why !== null) {
        this.notes.push(`column ${i + 1} \`${name}\` is not read: unsupported column type, ${why}; the other columns are read`);
        return;
      }
      const kind = kindOf(child);
      const d = declared.get(name);
      kept.push({
        leaf: { key: name, kind },
        meta: { unit: d?.unit ?? null, ucd: d?.ucd ?? null, description: d?.description ?? null, type: storageType(child) },
      });
    });
    const { names, notes } = uniqueColumnNames(kept.map((k) => k.leaf.key));
    this.notes.push(...notes);
    this.leaves = kept.map((k) => k.leaf);
    this.columns = kept.map((k, i) => ({ name: names[i], ...k.meta }));
    this.selection = new Selection(this.leaves.length);
    try {
      this.scan = await parquetScan({ file: this.file, metadata: this.metadata, compressors, columns: this.leaves.map((l) => l.key) });
    } catch (err) {
      throw damaged(this.src, err, 'its row groups');
    }
  }

  selectColumns(indices: readonly number[]): void {
    this.selection.select(indices);
  }

  async *batches(): AsyncGenerator<RawBatch> {
    if (this.started) throw new Error('CatalogReader.batches() can be iterated only once');
    this.started = true;
    const scan = this.scan!;
    let group = 0;
    for (const range of scan.ranges) {
      group++;
      let at = range.rowStart;
      if (this.stats.rows === 0 && at < range.rowEnd) {
        // The sample: every column, for the first batch only.
        const end = Math.min(range.rowEnd, at + this.batchSize);
        yield this.toBatch(await this.read(scan, at, end, group, null), end - at);
        at = end;
      }
      if (at >= range.rowEnd) continue;
      // The rest of the row group, only the columns in use, then cut into batches.
      const data = await this.read(scan, at, range.rowEnd, group, this.selection);
      for (let start = 0; start < range.rowEnd - at; start += this.batchSize) {
        const n = Math.min(this.batchSize, range.rowEnd - at - start);
        yield this.toBatch(
          data.map((d) => (d === null ? null : sliceDecoded(d, start, start + n))),
          n,
        );
      }
    }
  }

  async close(): Promise<void> {
    // hyparquet opens a short-lived stream per slice; nothing stays open between reads.
  }

  private async read(scan: ParquetScan, rowStart: number, rowEnd: number, group: number, selection: Selection | null): Promise<(DecodedArray | null)[]> {
    try {
      return await Promise.all(
        this.leaves.map((l, c) => (selection === null || selection.has(c) ? scan.readColumn({ column: l.key, rowStart, rowEnd }) : Promise.resolve(null))),
      );
    } catch (err) {
      throw damaged(this.src, err, `row group ${group} (rows ${rowStart + 1}-${rowEnd})`, `row ${rowStart + 1}`);
    }
  }

  private toBatch(data: (DecodedArray | null)[], n: number): RawBatch {
    const columns: RawColumn[] = data.map((d, c) => {
      if (d === null) return skippedColumn(n);
      return this.leaves[c].kind === 'number' ? numberColumn(d, n) : { kind: 'text', values: textValues(d, n) };
    });
    const firstRow = this.stats.rows + 1;
    this.stats.rows += n;
    this.stats.records += n;
    return { length: n, firstRow, lines: null, columns, malformed: [] };
  }

  /** Units, UCDs and descriptions the writer left in the key-value metadata. */
  private declaredMeta(): Map<string, DeclaredMeta> {
    const out = new Map<string, DeclaredMeta>();
    const kv = this.metadata.key_value_metadata ?? [];
    const arrow = kv.find((k) => k.key === 'ARROW:schema')?.value;
    if (arrow) {
      try {
        for (const f of arrowSchemaFields(arrow)) out.set(f.name, f.meta);
      } catch {
        this.notes.push('the embedded Arrow schema (ARROW:schema) could not be decoded; its field metadata were not used');
      }
    }
    const astropy = kv.find((k) => k.key === 'table_meta_yaml')?.value;
    if (astropy) {
      try {
        for (const [name, meta] of astropyColumns(astropy)) {
          const prev = out.get(name);
          out.set(name, { unit: prev?.unit ?? meta.unit, ucd: prev?.ucd ?? meta.ucd, description: prev?.description ?? meta.description });
        }
      } catch {
        this.notes.push("astropy's table_meta_yaml could not be parsed; its units were not used");
      }
    }
    return out;
  }
}

function unsupported(node: SchemaTree): string | null {
  if (node.children.length > 0) return 'nested (a group of fields)';
  const rep = node.element.repetition_type;
  if (rep === 'REPEATED') return 'a list of values per row';
  return null;
}

function kindOf(node: SchemaTree): Kind {
  const e = node.element;
  const logical = e.logical_type?.type;
  if (logical === 'DECIMAL' || logical === 'FLOAT16') return 'number';
  if (e.converted_type === 'DECIMAL') return 'number';
  if (logical === 'DATE' || logical === 'TIME' || logical === 'TIMESTAMP' || e.converted_type === 'DATE') return 'text';
  return e.type === 'DOUBLE' || e.type === 'FLOAT' || e.type === 'INT32' ? 'number' : 'text';
}

function storageType(node: SchemaTree): ColumnMeta['type'] {
  const t = node.element.type;
  if (t === 'BOOLEAN') return 'boolean';
  const decimal = node.element.logical_type?.type === 'DECIMAL' || node.element.converted_type === 'DECIMAL';
  if (kindOf(node) === 'number') return t === 'INT32' && !decimal ? 'integer' : 'float';
  return t === 'INT64' && kindOf(node) === 'text' && node.element.logical_type?.type !== 'TIMESTAMP' ? 'integer' : 'text';
}

function sliceDecoded(d: DecodedArray, start: number, end: number): DecodedArray {
  return Array.isArray(d) ? d.slice(start, end) : (d as Float64Array).subarray(start, end);
}

function numberColumn(d: DecodedArray, n: number): RawColumn {
  if (d instanceof Float64Array) return { kind: 'number', values: d.length === n ? d.slice() : d.slice(0, n), nulls: null };
  const values = new Float64Array(n);
  let nulls: Uint8Array | null = null;
  if (ArrayBuffer.isView(d) && !(d instanceof BigInt64Array) && !(d instanceof BigUint64Array)) {
    values.set((d as Float32Array | Int32Array | Uint32Array | Uint8Array).subarray(0, n));
    return { kind: 'number', values, nulls };
  }
  const a = d as ArrayLike<unknown>;
  for (let i = 0; i < n; i++) {
    const v = a[i];
    if (typeof v === 'number') values[i] = v;
    else if (typeof v === 'bigint') values[i] = Number(v);
    else {
      values[i] = NaN;
      if (v === null || v === undefined) (nulls ??= new Uint8Array(n))[i] = 1;
    }
  }
  return { kind: 'number', values, nulls };
}

function textValues(d: DecodedArray, n: number): (string | null)[] {
  const out = new Array<string | null>(n);
  const a = d as ArrayLike<unknown>;
  for (let i = 0; i < n; i++) out[i] = textOf(a[i]);
  return out;
}

function textOf(v: unknown): string | null {
  if (v === null || v === undefined) return null;
  if (typeof v === 'string') return v;
  if (typeof v === 'number' || typeof v === 'bigint') return String(v);
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  if (v instanceof Date) return Number.isNaN(v.getTime()) ? null : v.toISOString();
  if (v instanceof Uint8Array) return Buffer.from(v).toString('hex');
  return JSON.stringify(v, (_k, x: unknown) => (typeof x === 'bigint' ? x.toString() : x));
}

/** Field names and their metadata from the base64 Arrow IPC schema message pyarrow and arrow-rs embed. */
function arrowSchemaFields(base64: string): { name: string; meta: DeclaredMeta }[] {
  let msg = Buffer.from(base64, 'base64');
  // Older writers leave out the 0xFFFFFFFF continuation marker; the reader wants it.
  if (msg.readUInt32LE(0) !== 0xffffffff) msg = Buffer.concat([Buffer.from([0xff, 0xff, 0xff, 0xff]), msg]);
  const stream = Buffer.concat([msg, Buffer.from([0xff, 0xff, 0xff, 0xff, 0, 0, 0, 0])]);
  const reader = RecordBatchReader.from(stream);
  reader.open();
  return reader.schema.fields.map((f) => {
    const get = (k: string) => {
      const v = f.metadata.get(k);
      return v !== undefined && v.trim() !== '' ? v.trim() : null;
    };
    return { name: f.name, meta: { unit: get('unit'), ucd: get('ucd'), description: get('description') } };
  });
}

/** Units and descriptions astropy writes into `table_meta_yaml` (an ECSV header without the `# `). */
function astropyColumns(yaml: string): Map<string, DeclaredMeta> {
  const out = new Map<string, DeclaredMeta>();
  const doc = parseYaml(yaml).value as { datatype?: unknown } | null;
  if (!doc || !Array.isArray(doc.datatype)) return out;
  for (const c of doc.datatype as Record<string, unknown>[]) {
    if (!c || typeof c.name !== 'string') continue;
    const unit = typeof c.unit === 'string' && c.unit.trim() !== '' ? ecsvUnit(c.unit) : null;
    const description = typeof c.description === 'string' ? c.description : null;
    out.set(c.name, { unit, ucd: null, description });
  }
  return out;
}
