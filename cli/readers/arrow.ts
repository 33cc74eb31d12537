/**
 * Arrow IPC, both the file format (.arrow / Feather v2) and the stream format (.arrows).
 *
 * Numeric columns are copied out of Arrow's buffers as whole typed arrays; the validity bitmap is
 * applied by hand because `toArray()` shows a null as whatever bytes sit in its slot (usually 0),
 * and the linter must tell a null from a real 0 and from a NaN. 64-bit integers become decimal
 * strings: survey source ids have 19 digits and a double would silently round them.
 */
import { createReadStream, type ReadStream } from 'node:fs';
import { open, type FileHandle } from 'node:fs/promises';
import {
  Precision,
  RecordBatchReader,
  Type,
  makeVector,
  util,
  type Data,
  type DataType,
  type Field,
  type RecordBatch,
  type Schema,
} from 'apache-arrow';
import { batchSizeOf, describeIoError, displayName, uniqueColumnNames } from './common.js';
import {
  InputError,
  type CatalogReader,
  type ColumnMeta,
  type RawBatch,
  type RawColumn,
  type ReaderOptions,
  type ReaderStats,
} from './types.js';

const FILE_MAGIC = 'ARROW1';

export async function openArrow(path: string, options: ReaderOptions = {}): Promise<CatalogReader> {
  const name = displayName(path);
  if (path === '-') return ArrowReader.fromStream(path, process.stdin, options);

  let handle: FileHandle;
  try {
    handle = await open(path, 'r');
  } catch (err) {
    throw new InputError(`cannot read ${name}: ${describeIoError(err)}`, path);
  }
  let isFileFormat: boolean;
  try {
    const size = (await handle.stat()).size;
    const head = await readAt(handle, 0, 8);
    isFileFormat = head.subarray(0, 6).toString('latin1') === FILE_MAGIC;
    if (isFileFormat) {
      // The footer (schema and batch index) sits at the end; without the closing magic it is
      // gone, and apache-arrow would fail later with an unhelpful TypeError.
      const tail = size >= 14 ? await readAt(handle, size - 6, 6) : Buffer.alloc(0);
      if (tail.toString('latin1') !== FILE_MAGIC) {
        throw new InputError(
          `${name}: truncated or damaged Arrow IPC file: it starts with ARROW1 but does not end with it, so its footer is missing (the file ends at byte ${size})`,
          path,
          `byte ${size}`,
        );
      }
    } else if (size === 0) {
      throw new InputError(`${name}: the file is empty, so it holds no Arrow data`, path, 'byte 0');
    }
  } catch (err) {
    await handle.close().catch(() => undefined);
    if (err instanceof InputError) throw err;
    throw new InputError(`cannot read ${name}: ${describeIoError(err)}`, path);
  }

  if (isFileFormat) return ArrowReader.fromFile(path, handle, options);
  // A FileHandle suits random access to the footer; the stream format is read front to back.
  await handle.close();
  return ArrowReader.fromStream(path, createReadStream(path), options);
}

async function readAt(handle: FileHandle, position: number, length: number): Promise<Buffer> {
  const buf = Buffer.alloc(length);
  const { bytesRead } = await handle.read(buf, 0, length, position);
  return buf.subarray(0, bytesRead);
}

type BatchSource = AsyncIterator<RecordBatch>;

class ArrowReader implements CatalogReader {
  readonly format = 'arrow';
  readonly path: string;
  readonly columns: ColumnMeta[];
  readonly stats: ReaderStats = { records: 0, rows: 0, unparseable: 0 };
  readonly notes: string[];

  private readonly name: string;
  private readonly batchSize: number;
  private readonly schema: Schema;
  private readonly nextBatch: () => Promise<IteratorResult<RecordBatch>>;
  private readonly release: () => Promise<void>;
  private started = false;
  private closed = false;
  /** Decoded dictionaries, so a dictionary shared by many batches is turned into strings once. */
  private dictionaries = new WeakMap<object, (string | null)[]>();

  private constructor(
    path: string,
    schema: Schema,
    options: ReaderOptions,
    nextBatch: () => Promise<IteratorResult<RecordBatch>>,
    release: () => Promise<void>,
  ) {
    this.path = path;
    this.name = displayName(path);
    this.schema = schema;
    this.batchSize = batchSizeOf(options.batchSize);
    this.nextBatch = nextBatch;
    this.release = release;
    const { names, notes } = uniqueColumnNames(schema.fields.map((f) => f.name));
    this.notes = notes;
    this.columns = schema.fields.map((f, i) => columnMeta(f, names[i]));
  }

  static async fromFile(path: string, handle: FileHandle, options: ReaderOptions): Promise<ArrowReader> {
    const name = displayName(path);
    try {
      const reader = await RecordBatchReader.from(handle);
      await reader.open();
      const batches: BatchSource = reader[Symbol.asyncIterator]();
      return new ArrowReader(path, reader.schema, options, () => batches.next(), () => handle.close());
    } catch (err) {
      await handle.close().catch(() => undefined);
      throw damaged(name, path, err, null);
    }
  }

  /**
   * The stream format may hold several streams back to back. apache-arrow's plain reader stops
   * after the first, which would drop the rest silently; readAll shows each, and we accept a
   * follower only if its schema is the same.
   */
  static async fromStream(path: string, input: NodeJS.ReadableStream, options: ReaderOptions): Promise<ArrowReader> {
    const name = displayName(path);
    const release = async () => {
      if (path !== '-') (input as ReadStream).destroy();
    };
    try {
      const streams = RecordBatchReader.readAll(input)[Symbol.asyncIterator]();
      const first = await streams.next();
      if (first.done) throw new Error('no schema message found');
      const schema = first.value.schema;
      let current: BatchSource = first.value[Symbol.asyncIterator]();
      let streamNo = 1;
      let rowsSoFar = 0;
      const next = async (): Promise<IteratorResult<RecordBatch>> => {
        for (;;) {
          const r = await current.next();
          if (!r.done) {
            rowsSoFar += r.value.numRows;
            return r;
          }
          const follower = await streams.next();
          if (follower.done) return r;
          streamNo++;
          const change = schemaDifference(schema, follower.value.schema);
          if (change !== null) {
            throw new InputError(
              `${name}: the schema changes mid-stream after row ${rowsSoFar} (stream ${streamNo}: ${change}); one input must hold one table`,
              path,
              `row ${rowsSoFar + 1}`,
            );
          }
          current = follower.value[Symbol.asyncIterator]();
        }
      };
      return new ArrowReader(path, schema, options, next, release);
    } catch (err) {
      await release();
      throw damaged(name, path, err, null);
    }
  }

  async *batches(): AsyncGenerator<RawBatch> {
    if (this.started) throw new Error('CatalogReader.batches() can be iterated only once');
    this.started = true;
    try {
      for (;;) {
        let r: IteratorResult<RecordBatch>;
        try {
          r = await this.nextBatch();
        } catch (err) {
          throw damaged(this.name, this.path, err, this.stats.rows);
        }
        if (r.done) break;
        const batch = r.value;
        const change = schemaDifference(this.schema, batch.schema);
        if (change !== null) {
          throw new InputError(
            `${this.name}: the schema changes after row ${this.stats.rows} (${change}); one input must hold one table`,
            this.path,
            `row ${this.stats.rows + 1}`,
          );
        }
        const total = batch.numRows;
        for (let start = 0; start < total; start += this.batchSize) {
          const end = Math.min(total, start + this.batchSize);
          yield this.convert(batch, start, end);
        }
      }
    } finally {
      await this.close();
    }
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    await this.release().catch(() => undefined);
  }

  private convert(batch: RecordBatch, start: number, end: number): RawBatch {
    const length = end - start;
    const columns: RawColumn[] = [];
    const children = batch.data.children;
    for (let c = 0; c < children.length; c++) columns.push(this.column(children[c], start, length));
    const firstRow = this.stats.rows + 1;
    this.stats.rows += length;
    this.stats.records += length;
    return { length, firstRow, lines: null, columns, malformed: [] };
  }

  private column(data: Data, start: number, length: number): RawColumn {
    const type = data.type as DataType;
    switch (type.typeId) {
      case Type.Float:
        return numberColumn(data, start, length, floatValues(data, type, start, length));
      case Type.Int: {
        const bits = (type as unknown as { bitWidth: number }).bitWidth;
        if (bits === 64) return { kind: 'text', values: bigintTexts(data, start, length) };
        const ints = (data.values as Int32Array).subarray(start, start + length);
        return numberColumn(data, start, length, new Float64Array(ints));
      }
      case Type.Bool:
        return { kind: 'text', values: boolTexts(data, start, length) };
      case Type.Utf8:
      case Type.LargeUtf8:
        return { kind: 'text', values: utf8Texts(data, start, length) };
      case Type.Dictionary:
        return { kind: 'text', values: this.dictionaryTexts(data, start, length) };
      case Type.Null:
        return { kind: 'text', values: new Array<string | null>(length).fill(null) };
      default:
        return { kind: 'text', values: genericTexts(data, start, length) };
    }
  }

  private dictionaryTexts(data: Data, start: number, length: number): (string | null)[] {
    const dictionary = data.dictionary!;
    let words = this.dictionaries.get(dictionary);
    if (words === undefined) {
      words = [];
      for (let j = 0; j < dictionary.length; j++) words.push(formatValue(dictionary.get(j)));
      this.dictionaries.set(dictionary, words);
    }
    const keys = (data.values as Int32Array | BigInt64Array).subarray(start, start + length);
    const out = new Array<string | null>(length);
    const valid = validity(data, start, length);
    for (let i = 0; i < length; i++) {
      out[i] = valid !== null && valid[i] === 0 ? null : (words[Number(keys[i])] ?? null);
    }
    return out;
  }
}

function columnMeta(field: Field, name: string): ColumnMeta {
  const meta = field.metadata;
  return {
    name,
    unit: meta.get('unit') ?? null,
    ucd: meta.get('ucd') ?? null,
    description: meta.get('description') ?? null,
    type: storageType(field.type),
  };
}

function storageType(type: DataType): ColumnMeta['type'] {
  switch (type.typeId) {
    case Type.Float:
      return 'float';
    case Type.Int:
      return 'integer';
    case Type.Bool:
      return 'boolean';
    case Type.Dictionary:
      return storageType((type as unknown as { dictionary: DataType }).dictionary);
    default:
      return 'text';
  }
}

/** Null when equal; otherwise a short description of the first difference. */
function schemaDifference(a: Schema, b: Schema): string | null {
  if (a === b) return null;
  if (a.fields.length !== b.fields.length) return `${b.fields.length} columns instead of ${a.fields.length}`;
  for (let i = 0; i < a.fields.length; i++) {
    const fa = a.fields[i];
    const fb = b.fields[i];
    if (fa.name !== fb.name) return `column ${i + 1} is '${fb.name}' instead of '${fa.name}'`;
    if (String(fa.type) !== String(fb.type)) return `column '${fa.name}' is ${fb.type} instead of ${fa.type}`;
  }
  return null;
}

function damaged(name: string, path: string, err: unknown, rows: number | null): InputError {
  if (err instanceof InputError) return err;
  const reason = err instanceof Error ? err.message : String(err);
  const where = rows === null ? '' : ` after row ${rows}`;
  return new InputError(
    `${name}: cannot read the Arrow data${where} (truncated or not Arrow IPC?): ${reason}`,
    path,
    rows === null ? null : `row ${rows + 1}`,
  );
}

/** Per row 1 = valid, 0 = null; null when the column has no nulls (the common case). */
function validity(data: Data, start: number, length: number): Uint8Array | null {
  const bitmap = data.nullBitmap;
  if (data.nullCount === 0 || !bitmap || bitmap.length === 0) return null;
  // The bitmap is never sliced along with the values: bit k belongs to logical row k - offset.
  const base = data.offset + start;
  const out = new Uint8Array(length);
  for (let i = 0; i < length; i++) {
    const bit = base + i;
    out[i] = (bitmap[bit >> 3] >> (bit & 7)) & 1;
  }
  return out;
}

function numberColumn(data: Data, start: number, length: number, values: Float64Array): RawColumn {
  const valid = validity(data, start, length);
  if (valid === null) return { kind: 'number', values, nulls: null };
  const nulls = new Uint8Array(length);
  for (let i = 0; i < length; i++) {
    if (valid[i] === 0) {
      nulls[i] = 1;
      values[i] = NaN;
    }
  }
  return { kind: 'number', values, nulls };
}

/** Always a fresh array: the caller overwrites null slots with NaN. */
function floatValues(data: Data, type: DataType, start: number, length: number): Float64Array {
  const precision = (type as unknown as { precision: Precision }).precision;
  if (precision === Precision.HALF) {
    const halves = (data.values as Uint16Array).subarray(start, start + length);
    const out = new Float64Array(length);
    for (let i = 0; i < length; i++) out[i] = util.uint16ToFloat64(halves[i]);
    return out;
  }
  if (precision === Precision.SINGLE) {
    return new Float64Array((data.values as Float32Array).subarray(start, start + length));
  }
  return (data.values as Float64Array).slice(start, start + length);
}

function bigintTexts(data: Data, start: number, length: number): (string | null)[] {
  const values = (data.values as BigInt64Array | BigUint64Array).subarray(start, start + length);
  const valid = validity(data, start, length);
  const out = new Array<string | null>(length);
  for (let i = 0; i < length; i++) out[i] = valid !== null && valid[i] === 0 ? null : values[i].toString();
  return out;
}

function boolTexts(data: Data, start: number, length: number): (string | null)[] {
  // Bool values are bit-packed like the validity bitmap, and likewise not sliced.
  const bits = data.values as Uint8Array;
  const valid = validity(data, start, length);
  const base = data.offset + start;
  const out = new Array<string | null>(length);
  for (let i = 0; i < length; i++) {
    const bit = base + i;
    out[i] = valid !== null && valid[i] === 0 ? null : (bits[bit >> 3] >> (bit & 7)) & 1 ? 'true' : 'false';
  }
  return out;
}

function utf8Texts(data: Data, start: number, length: number): (string | null)[] {
  const offsets = data.valueOffsets as Int32Array | BigInt64Array;
  const bytes = data.values as Uint8Array;
  // Node's Buffer decoding is much quicker than TextDecoder for short strings like names.
  const text = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const valid = validity(data, start, length);
  const out = new Array<string | null>(length);
  for (let i = 0; i < length; i++) {
    const row = start + i;
    out[i] =
      valid !== null && valid[i] === 0
        ? null
        : text.toString('utf8', Number(offsets[row]), Number(offsets[row + 1]));
  }
  return out;
}

/** Rare types (dates, decimals, lists, ...) go through apache-arrow's own accessors. */
function genericTexts(data: Data, start: number, length: number): (string | null)[] {
  const vector = makeVector(data);
  const out = new Array<string | null>(length);
  const isTime = data.typeId === Type.Date || data.typeId === Type.Timestamp;
  for (let i = 0; i < length; i++) {
    const value: unknown = vector.get(start + i);
    out[i] = isTime && typeof value === 'number' ? isoTime(value) : formatValue(value);
  }
  return out;
}

function isoTime(ms: number): string {
  const d = new Date(ms);
  return Number.isFinite(d.getTime()) ? d.toISOString() : String(ms);
}

function formatValue(value: unknown): string | null {
  if (value === null || value === undefined) return null;
  if (typeof value === 'string') return value;
  if (typeof value === 'number' || typeof value === 'bigint' || typeof value === 'boolean') return String(value);
  const json = (value as { toJSON?: () => unknown }).toJSON;
  if (typeof json === 'function') {
    return JSON.stringify(json.call(value), (_k, v: unknown) => (typeof v === 'bigint' ? v.toString() : v));
  }
  return String(value);
}
