/**
 * FITS binary tables (FITS Standard 4.0, section 7.3, XTENSION = 'BINTABLE'), read as a stream.
 *
 * The reader walks the HDUs front to back, skipping the data of those it does not want, and reads
 * the chosen table a batch of rows at a time: each field is decoded straight from the big-endian
 * row bytes into a Float64Array (numbers) or an array of strings (text, logicals, 64-bit integers,
 * which a double would round). TNULLn is compared with the stored integer, then
 * physical = TZEROn + TSCALn * stored; unsigned integers arrive through TZERO as the standard
 * prescribes. Column types the linter cannot use (bits, complex, vectors, variable-length arrays)
 * are left out with a note naming them, never a failure.
 */
import { ByteQueue } from './byte-queue.js';
import { batchSizeOf, describeIoError, uniqueColumnNames } from './common.js';
import { FitsFormatError, dataBytes, padded, readHeader, type Card, type FitsHeader } from './fits-header.js';
import { Selection, skippedColumn, type ColumnProjection } from './projection.js';
import { opened, type InputSource } from './source.js';
import {
  InputError,
  type CatalogReader,
  type ColumnMeta,
  type RawBatch,
  type RawColumn,
  type ReaderOptions,
  type ReaderStats,
} from './types.js';

export interface FitsOptions extends ReaderOptions {
  /** HDU to read, 0 = primary; by default the first binary table. */
  hdu?: number;
  /** Bytes per read; tests make it tiny. */
  readChunkBytes?: number;
}

/** Bytes per element of each TFORM type code (Table 18 of FITS 4.0); X counts bits. */
const TYPE_BYTES: Readonly<Record<string, number>> = { L: 1, X: 0, B: 1, I: 2, J: 4, K: 8, A: 1, E: 4, D: 8, C: 8, M: 16, P: 8, Q: 16 };
const TYPE_WORDS: Readonly<Record<string, string>> = {
  X: 'bit array',
  C: 'single-precision complex',
  M: 'double-precision complex',
  P: 'variable-length array (32-bit descriptor)',
  Q: 'variable-length array (64-bit descriptor)',
};
const TWO_63 = 1n << 63n;

type FieldKind = 'number' | 'int64' | 'logical' | 'text';

interface Field {
  /** Index in the reader's columns (the fields it reads). */
  column: number;
  kind: FieldKind;
  code: string;
  offset: number;
  width: number;
  /** Stored value meaning "undefined" (integer types only). */
  tnull: number | null;
  tnullBig: bigint | null;
  scale: number;
  zero: number;
  /** K with TZERO = 2^63: an unsigned 64-bit integer, kept exact as text. */
  unsigned64: boolean;
}

export async function openFits(src: InputSource, options: FitsOptions = {}): Promise<CatalogReader> {
  const queue = new ByteQueue(src.bytes(options.readChunkBytes), (err, position) =>
    err instanceof InputError ? err : new InputError(`cannot read ${src.name}: ${describeIoError(err)}`, src.path, `byte ${position}`),
  );
  try {
    return await opened(new FitsReader(src, queue, options));
  } catch (err) {
    if (err instanceof FitsFormatError) throw new InputError(`${src.name}: ${err.message}`, src.path, err.position);
    throw err;
  }
}

class FitsReader implements CatalogReader, ColumnProjection {
  readonly format = 'fits';
  readonly path: string;
  columns: ColumnMeta[] = [];
  readonly stats: ReaderStats = { records: 0, rows: 0, unparseable: 0 };

  progress(): { done: number; total: number; unit: 'rows' } | null {
    return this.rowCount > 0 ? { done: this.stats.rows, total: this.rowCount, unit: 'rows' } : null;
  }
  readonly notes: string[] = [];
  /** The HDU read, for messages and for `starsieve columns`. */
  hdu = -1;

  private readonly batchSize: number;
  private fields: Field[] = [];
  private rowBytes = 0;
  private rowCount = 0;
  private dataStart = 0;
  private selection = new Selection(0);
  private started = false;
  private closed = false;

  constructor(
    private readonly src: InputSource,
    private readonly queue: ByteQueue,
    private readonly options: FitsOptions,
  ) {
    this.path = src.path;
    this.batchSize = batchSizeOf(options.batchSize);
  }

  async open(): Promise<void> {
    const wanted = this.options.hdu;
    if (wanted !== undefined && (!Number.isInteger(wanted) || wanted < 0)) {
      throw new InputError(`--hdu must be a whole number, 0 for the primary HDU (got ${wanted})`, this.path);
    }
    const seen: string[] = [];
    let primaryHoldsVotable = false;
    for (let hdu = 0; ; hdu++) {
      const header = await readHeader(this.queue, hdu);
      if (header === null) {
        const list = seen.join('; ');
        throw new InputError(
          wanted !== undefined
            ? `${this.src.name} has no HDU ${wanted}: it holds ${hdu} HDU${hdu === 1 ? '' : 's'} (${list})`
            : `${this.src.name} holds no binary table (HDUs: ${list}); starsieve reads BINTABLE extensions`,
          this.path,
        );
      }
      const kind = hduKind(header);
      seen.push(`${hdu} ${kind}`);
      if (hdu === 0 && header.value('VOTMETA') === true) primaryHoldsVotable = true;
      const isTable = kind === 'BINTABLE';
      if (wanted === hdu || (wanted === undefined && isTable)) {
        if (!isTable) {
          const what = kind === 'TABLE' ? 'an ASCII table (XTENSION = \'TABLE\'), which starsieve does not read' : `the ${kind}, not a binary table`;
          throw new InputError(`${this.src.name}: HDU ${hdu} is ${what}; choose a BINTABLE HDU with --hdu (HDUs so far: ${seen.join('; ')})`, this.path, `HDU ${hdu}`);
        }
        this.hdu = hdu;
        this.planTable(header);
        if (primaryHoldsVotable && hdu > 0) {
          this.notes.push(
            'the primary HDU holds a VOTable description of the table (FITS-plus, VOTMETA = T); the binary table\'s own TTYPE/TUNIT/TUCD keywords were used',
          );
        }
        if (wanted === undefined && hdu > 1) this.notes.push(`read HDU ${hdu}, the first binary table in the file (choose another with --hdu)`);
        return;
      }
      const skip = padded(dataBytes(header));
      const skipped = await this.queue.skip(skip);
      if (skipped < skip && wanted !== undefined) {
        throw new InputError(`${this.src.name}: the file ends inside the data of HDU ${hdu}, before HDU ${wanted}`, this.path, `byte ${this.queue.position}`);
      }
    }
  }

  private planTable(h: FitsHeader): void {
    const hdu = h.hdu;
    const where = (card: Card | null) => (card ? `HDU ${hdu}, header card ${card.number}` : `HDU ${hdu} header`);
    const bitpix = h.number('BITPIX', where);
    const naxis = h.integer('NAXIS', where);
    if (bitpix !== 8 || naxis !== 2) {
      throw new FitsFormatError(`a binary table needs BITPIX = 8 and NAXIS = 2, but HDU ${hdu} has BITPIX = ${bitpix} and NAXIS = ${naxis}`, where(null));
    }
    this.rowBytes = h.integer('NAXIS1', where);
    this.rowCount = h.integer('NAXIS2', where);
    const gcount = h.number('GCOUNT', where) ?? 1;
    if (gcount !== 1) throw new FitsFormatError(`GCOUNT = ${gcount}; a binary table must have GCOUNT = 1`, where(h.card('GCOUNT')!));
    const tfields = h.integer('TFIELDS', where);
    if (tfields > 999) throw new FitsFormatError(`TFIELDS = ${tfields}; at most 999 are allowed`, where(h.card('TFIELDS')!));

    const metas: Omit<ColumnMeta, 'name'>[] = [];
    const rawNames: string[] = [];
    const fields: Field[] = [];
    let offset = 0;
    let anyUnit = false;
    for (let n = 1; n <= tfields; n++) {
      const tform = h.string(`TFORM${n}`);
      if (tform === null) throw new FitsFormatError(`TFORM${n} is missing (TFIELDS = ${tfields})`, where(null));
      const m = /^\s*(\d*)([A-Z])(.*)$/.exec(tform);
      const code = m?.[2] ?? '';
      if (!m || !Object.hasOwn(TYPE_BYTES, code)) {
        throw new FitsFormatError(`TFORM${n} = '${tform}' is not a binary table format (rTa with T one of L X B I J K A E D C M P Q)`, where(h.card(`TFORM${n}`)!));
      }
      const repeat = m[1] === '' ? 1 : Number(m[1]);
      const width = code === 'X' ? Math.ceil(repeat / 8) : repeat * TYPE_BYTES[code];
      const fieldOffset = offset;
      offset += width;
      const name = (h.string(`TTYPE${n}`) ?? '').trim();
      const label = `column ${n}${name ? ` \`${name}\`` : ''} (TFORM${n} = '${tform}')`;
      const skip = unsupported(code, repeat);
      if (skip !== null) {
        this.notes.push(`${label} is not read: unsupported column type, ${skip}; the other columns are read`);
        continue;
      }
      const unit = h.string(`TUNIT${n}`);
      if (unit !== null && unit.trim() !== '') anyUnit = true;
      const field = this.planField(h, n, code, fieldOffset, width, label, fields.length);
      fields.push(field);
      rawNames.push(name);
      metas.push({
        unit: unit !== null && unit.trim() !== '' ? unit.trim() : null,
        ucd: nonEmpty(h.string(`TUCD${n}`)),
        description: nonEmpty(h.string(`TCOMM${n}`) ?? h.string(`TDESC${n}`)),
        type: field.kind === 'text' ? 'text' : field.kind === 'logical' ? 'boolean' : code === 'E' || code === 'D' || field.scale !== 1 || !Number.isInteger(field.zero) ? 'float' : 'integer',
      });
    }
    if (offset !== this.rowBytes) {
      throw new FitsFormatError(
        `the TFORMn widths add up to ${offset} bytes per row, but NAXIS1 = ${this.rowBytes}; the column layout cannot be trusted`,
        where(h.card('NAXIS1')!),
      );
    }
    const { names, notes } = uniqueColumnNames(rawNames);
    this.notes.push(...notes);
    this.columns = metas.map((m, i) => ({ name: names[i], ...m }));
    this.fields = fields;
    this.selection = new Selection(fields.length);
    if (!anyUnit && fields.length > 0) this.notes.push('no column declares a unit (TUNITn); units come from the column names and values');
    this.dataStart = this.queue.position;
    const need = this.rowBytes * this.rowCount;
    if (!this.src.gzip && this.dataStart + need > this.src.size) {
      const complete = Math.floor(Math.max(0, this.src.size - this.dataStart) / Math.max(1, this.rowBytes));
      throw new FitsFormatError(
        `truncated file: HDU ${hdu} promises ${this.rowCount} rows of ${this.rowBytes} bytes, but the file ends after ${complete} complete rows`,
        `byte ${this.src.size}, row ${complete + 1}`,
      );
    }
  }

  private planField(h: FitsHeader, n: number, code: string, offset: number, width: number, label: string, column: number): Field {
    const where = (card: Card | null) => (card ? `HDU ${h.hdu}, header card ${card.number}` : `HDU ${h.hdu} header`);
    const integer = code === 'B' || code === 'I' || code === 'J' || code === 'K';
    const scale = h.number(`TSCAL${n}`, where) ?? 1;
    const zero = h.number(`TZERO${n}`, where) ?? 0;
    const nullCard = h.card(`TNULL${n}`);
    let tnull: number | null = null;
    let tnullBig: bigint | null = null;
    if (nullCard !== undefined && nullCard.value !== null) {
      if (!integer) {
        this.notes.push(`${label}: TNULL${n} is only defined for integer columns and was ignored`);
      } else if (typeof nullCard.value !== 'number' || !Number.isInteger(nullCard.value)) {
        throw new FitsFormatError(`TNULL${n} = ${JSON.stringify(nullCard.value)} is not an integer`, where(nullCard));
      } else {
        tnull = nullCard.value;
        tnullBig = BigInt(nullCard.value);
      }
    }
    let kind: FieldKind = 'number';
    let unsigned64 = false;
    if (code === 'A') kind = 'text';
    else if (code === 'L') kind = 'logical';
    else if (code === 'K' && scale === 1 && (zero === 0 || zero === 2 ** 63)) {
      kind = 'int64';
      unsigned64 = zero !== 0;
      // The keyword's digits as written: a double cannot hold every 64-bit TNULL exactly.
      if (tnull !== null && /^[+-]?\d+$/.test(nullCard!.text)) tnullBig = BigInt(nullCard!.text);
    }
    if ((kind === 'text' || kind === 'logical') && (scale !== 1 || zero !== 0)) {
      this.notes.push(`${label}: TSCAL${n}/TZERO${n} do not apply to this type and were ignored`);
    }
    return { column, kind, code, offset, width, tnull, tnullBig, scale, zero, unsigned64 };
  }

  selectColumns(indices: readonly number[]): void {
    this.selection.select(indices);
  }

  async *batches(): AsyncGenerator<RawBatch> {
    if (this.started) throw new Error('CatalogReader.batches() can be iterated only once');
    this.started = true;
    try {
      let done = 0;
      while (done < this.rowCount) {
        const n = Math.min(this.batchSize, this.rowCount - done);
        const want = n * this.rowBytes;
        const buf = await this.queue.read(want);
        if (buf.length < want) {
          const complete = done + Math.floor(buf.length / Math.max(1, this.rowBytes));
          throw new InputError(
            `${this.src.name}: truncated file: HDU ${this.hdu} promises ${this.rowCount} rows, but the data end after ${complete} complete rows`,
            this.path,
            `byte ${this.queue.position}, row ${complete + 1}`,
          );
        }
        yield this.decode(buf, n);
        done += n;
      }
    } finally {
      await this.close();
    }
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    this.queue.close();
  }

  private decode(buf: Buffer, n: number): RawBatch {
    const view = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
    const columns: RawColumn[] = [];
    for (const f of this.fields) {
      if (!this.selection.has(f.column)) columns.push(skippedColumn(n));
      else if (f.kind === 'number') columns.push(decodeNumbers(view, f, n, this.rowBytes));
      else if (f.kind === 'int64') columns.push({ kind: 'text', values: decodeInt64(view, f, n, this.rowBytes) });
      else if (f.kind === 'logical') columns.push({ kind: 'text', values: decodeLogicals(buf, f, n, this.rowBytes) });
      else columns.push({ kind: 'text', values: decodeStrings(buf, f, n, this.rowBytes) });
    }
    const firstRow = this.stats.rows + 1;
    this.stats.rows += n;
    this.stats.records += n;
    return { length: n, firstRow, lines: null, columns, malformed: [] };
  }
}

function hduKind(h: FitsHeader): string {
  if (h.hdu === 0) return 'primary array';
  const x = (h.string('XTENSION') ?? '').trim().toUpperCase();
  if (x === 'BINTABLE' || x === 'A3DTABLE') return 'BINTABLE';
  return x === '' ? 'extension without a type' : x === 'IMAGE' ? 'IMAGE' : x;
}

/** Why a field is left out, or null when it can be read. */
function unsupported(code: string, repeat: number): string | null {
  if (Object.hasOwn(TYPE_WORDS, code)) return TYPE_WORDS[code];
  if (repeat === 0) return 'no values (repeat count 0)';
  if (code !== 'A' && repeat > 1) return `${repeat} values per row (vector cells)`;
  return null;
}

function nonEmpty(s: string | null): string | null {
  return s === null || s.trim() === '' ? null : s.trim();
}

function decodeNumbers(view: DataView, f: Field, n: number, rowBytes: number): RawColumn {
  const out = new Float64Array(n);
  let nulls: Uint8Array | null = null;
  const { scale, zero, tnull } = f;
  let p = f.offset;
  switch (f.code) {
    case 'D':
      for (let i = 0; i < n; i++, p += rowBytes) out[i] = view.getFloat64(p);
      break;
    case 'E':
      for (let i = 0; i < n; i++, p += rowBytes) out[i] = view.getFloat32(p);
      break;
    case 'B':
      for (let i = 0; i < n; i++, p += rowBytes) out[i] = view.getUint8(p);
      break;
    case 'I':
      for (let i = 0; i < n; i++, p += rowBytes) out[i] = view.getInt16(p);
      break;
    case 'J':
      for (let i = 0; i < n; i++, p += rowBytes) out[i] = view.getInt32(p);
      break;
    case 'K': {
      const tnullBig = f.tnullBig;
      for (let i = 0; i < n; i++, p += rowBytes) {
        const raw = view.getBigInt64(p);
        if (tnullBig !== null && raw === tnullBig) {
          (nulls ??= new Uint8Array(n))[i] = 1;
          out[i] = NaN;
        } else {
          out[i] = Number(raw) * scale + zero;
        }
      }
      return { kind: 'number', values: out, nulls };
    }
  }
  // The stored integers are exact in a double, so TNULL can be compared after the copy.
  if (tnull !== null) {
    for (let i = 0; i < n; i++) {
      if (out[i] === tnull) {
        (nulls ??= new Uint8Array(n))[i] = 1;
        out[i] = NaN;
      }
    }
  }
  if (scale !== 1 || zero !== 0) {
    for (let i = 0; i < n; i++) out[i] = zero + scale * out[i];
  }
  return { kind: 'number', values: out, nulls };
}

function decodeInt64(view: DataView, f: Field, n: number, rowBytes: number): (string | null)[] {
  const out = new Array<string | null>(n);
  const tnull = f.tnullBig;
  let p = f.offset;
  for (let i = 0; i < n; i++, p += rowBytes) {
    const raw = view.getBigInt64(p);
    out[i] = tnull !== null && raw === tnull ? null : (f.unsigned64 ? raw + TWO_63 : raw).toString();
  }
  return out;
}

function decodeLogicals(buf: Buffer, f: Field, n: number, rowBytes: number): (string | null)[] {
  const out = new Array<string | null>(n);
  let p = f.offset;
  for (let i = 0; i < n; i++, p += rowBytes) {
    const b = buf[p];
    out[i] = b === 84 ? 'true' : b === 70 ? 'false' : null; // 'T', 'F'; a zero byte is null
  }
  return out;
}

function decodeStrings(buf: Buffer, f: Field, n: number, rowBytes: number): (string | null)[] {
  const out = new Array<string | null>(n);
  let p = f.offset;
  const w = f.width;
  for (let i = 0; i < n; i++, p += rowBytes) {
    if (buf[p] === 0) {
      out[i] = null;
      continue;
    }
    const stop = p + w;
    let end = p + 1;
    while (end < stop && buf[end] !== 0) end++;
    while (end > p && buf[end - 1] === 32) end--;
    out[i] = buf.toString('utf8', p, end);
  }
  return out;
}
