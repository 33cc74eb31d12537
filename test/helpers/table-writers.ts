/**
 * Small writers for the astronomy formats, used to make test fixtures and the FITS / VOTable
 * versions of the demo catalog. They write what the standards say (FITS 4.0 BINTABLE, VOTable
 * 1.4 TABLEDATA and BINARY2, ECSV 1.0, Parquet through parquet-wasm) and nothing more; options
 * exist so tests can plant exactly the oddity they need (TNULL, TZERO, CONTINUE cards, an
 * unsupported TFORM, several tables).
 *
 * Writers return chunk lists (Buffers or strings), so a million-row catalog is never one string.
 */
import { Field, Float64, Int64, RecordBatch, Schema, Struct, Table, Utf8, makeData, tableToIPC, vectorFromArray, Bool, Int16, Int32, Uint8, Float32 } from 'apache-arrow';

export type CellType = 'double' | 'float' | 'int16' | 'int32' | 'int64' | 'uint8' | 'bool' | 'string';
export type Cell = number | bigint | string | boolean | null;

export interface TableColumn {
  name: string;
  type: CellType;
  unit?: string;
  ucd?: string;
  description?: string;
  values: readonly Cell[];
}

export interface FitsColumn extends TableColumn {
  /** TFORM to write instead of the one the type implies (e.g. '2E', 'C', '16X'); the cells are then zero bytes. */
  form?: string;
  tnull?: number | bigint;
  tscal?: number;
  tzero?: number | bigint;
}

const rowsOf = (columns: readonly TableColumn[]) => (columns.length === 0 ? 0 : columns[0].values.length);

// ---- FITS ------------------------------------------------------------------------------------

const BLOCK = 2880;

/** One 80-character card; a long string goes on over CONTINUE cards (several 80-char cards). */
export function fitsCard(keyword: string, value?: string | number | bigint | boolean, comment?: string): string {
  const key = keyword.padEnd(8).slice(0, 8);
  if (value === undefined) return (key + (comment ?? '')).padEnd(80).slice(0, 80);
  let field: string;
  if (typeof value === 'string') {
    const quoted = value.replace(/'/g, "''");
    if (quoted.length > 67) return continued(key, quoted);
    field = `'${quoted.padEnd(8)}'`.padEnd(20);
  } else if (typeof value === 'boolean') {
    field = (value ? 'T' : 'F').padStart(20);
  } else {
    field = String(value).padStart(20);
  }
  const text = `${key}= ${field}${comment ? ` / ${comment}` : ''}`;
  if (text.length > 80) throw new Error(`card too long: ${text}`);
  return text.padEnd(80);
}

function continued(key: string, quoted: string): string {
  const pieces: string[] = [];
  let rest = quoted;
  while (rest.length > 0) {
    let cut = Math.min(rest.length, 66);
    // Never split a doubled quote.
    if (cut < rest.length && rest[cut - 1] === "'" && rest[cut] === "'") cut--;
    pieces.push(rest.slice(0, cut));
    rest = rest.slice(cut);
  }
  return pieces
    .map((p, i) => {
      const more = i < pieces.length - 1 ? '&' : '';
      return (i === 0 ? `${key}= '${p}${more}'` : `CONTINUE  '${p}${more}'`).padEnd(80);
    })
    .join('');
}

/** A header from cards (each a multiple of 80 characters), END added, padded to whole blocks. */
export function fitsHeader(cards: readonly string[]): Buffer {
  const text = cards.join('') + 'END'.padEnd(80);
  return Buffer.from(text.padEnd(Math.ceil(text.length / BLOCK) * BLOCK), 'latin1');
}

export function fitsPad(data: Buffer): Buffer {
  const size = Math.ceil(data.length / BLOCK) * BLOCK;
  return size === data.length ? data : Buffer.concat([data, Buffer.alloc(size - data.length)]);
}

/** The usual catalog primary HDU: no data, extensions follow. */
export function fitsPrimary(extra: readonly string[] = []): Buffer {
  return fitsHeader([fitsCard('SIMPLE', true), fitsCard('BITPIX', 8), fitsCard('NAXIS', 0), fitsCard('EXTEND', true), ...extra]);
}

/** A small IMAGE extension (16-bit), for files where a table is not the first extension. */
export function fitsImage(width: number, height: number): Buffer[] {
  const header = fitsHeader([
    fitsCard('XTENSION', 'IMAGE'),
    fitsCard('BITPIX', 16),
    fitsCard('NAXIS', 2),
    fitsCard('NAXIS1', width),
    fitsCard('NAXIS2', height),
    fitsCard('PCOUNT', 0),
    fitsCard('GCOUNT', 1),
  ]);
  return [header, fitsPad(Buffer.alloc(width * height * 2))];
}

interface FitsLayout {
  form: string;
  width: number;
  write: ((buf: Buffer, at: number, v: Cell) => void) | null;
}

function fitsLayout(c: FitsColumn): FitsLayout {
  if (c.form !== undefined) {
    const m = /^(\d*)([A-Z])/.exec(c.form)!;
    const r = m[1] === '' ? 1 : Number(m[1]);
    const bytes: Record<string, number> = { L: 1, B: 1, I: 2, J: 4, K: 8, A: 1, E: 4, D: 8, C: 8, M: 16, P: 8, Q: 16 };
    return { form: c.form, width: m[2] === 'X' ? Math.ceil(r / 8) : r * bytes[m[2]], write: null };
  }
  const tnull = c.tnull;
  const int = (v: Cell) => (v === null ? Number(tnull ?? 0) : Number(v));
  switch (c.type) {
    case 'double':
      return { form: 'D', width: 8, write: (b, at, v) => b.writeDoubleBE(v === null ? NaN : Number(v), at) };
    case 'float':
      return { form: 'E', width: 4, write: (b, at, v) => b.writeFloatBE(v === null ? NaN : Number(v), at) };
    case 'int16':
      return { form: 'I', width: 2, write: (b, at, v) => b.writeInt16BE(int(v), at) };
    case 'int32':
      return { form: 'J', width: 4, write: (b, at, v) => b.writeInt32BE(int(v), at) };
    case 'int64':
      return { form: 'K', width: 8, write: (b, at, v) => b.writeBigInt64BE(BigInt(v === null ? (tnull ?? 0) : (v as number | bigint)), at) };
    case 'uint8':
      return { form: 'B', width: 1, write: (b, at, v) => b.writeUInt8(int(v), at) };
    case 'bool':
      return { form: 'L', width: 1, write: (b, at, v) => b.writeUInt8(v === null ? 0 : v ? 84 : 70, at) };
    case 'string': {
      let width = 1;
      for (const v of c.values) if (v !== null) width = Math.max(width, Buffer.byteLength(String(v)));
      return {
        form: `${width}A`,
        width,
        write: (b, at, v) => {
          if (v !== null) b.write(String(v).padEnd(width), at, width, 'utf8');
        },
      };
    }
  }
}

export interface BintableOptions {
  extname?: string;
  extraCards?: readonly string[];
  /** Rows per data chunk (memory for big tables). */
  chunkRows?: number;
}

/** A BINTABLE HDU: header, then the data padded to whole blocks, as a list of chunks. */
export function fitsBintable(columns: readonly FitsColumn[], options: BintableOptions = {}): Buffer[] {
  const layouts = columns.map(fitsLayout);
  const rowBytes = layouts.reduce((a, l) => a + l.width, 0);
  const rows = rowsOf(columns);
  const cards = [
    fitsCard('XTENSION', 'BINTABLE', 'binary table extension'),
    fitsCard('BITPIX', 8),
    fitsCard('NAXIS', 2),
    fitsCard('NAXIS1', rowBytes, 'bytes per row'),
    fitsCard('NAXIS2', rows, 'rows'),
    fitsCard('PCOUNT', 0),
    fitsCard('GCOUNT', 1),
    fitsCard('TFIELDS', columns.length),
  ];
  if (options.extname) cards.push(fitsCard('EXTNAME', options.extname));
  columns.forEach((c, i) => {
    const n = i + 1;
    cards.push(fitsCard(`TTYPE${n}`, c.name), fitsCard(`TFORM${n}`, layouts[i].form));
    if (c.unit !== undefined) cards.push(fitsCard(`TUNIT${n}`, c.unit));
    if (c.ucd !== undefined) cards.push(fitsCard(`TUCD${n}`, c.ucd));
    if (c.description !== undefined) cards.push(fitsCard(`TCOMM${n}`, c.description));
    if (c.tnull !== undefined) cards.push(fitsCard(`TNULL${n}`, c.tnull));
    if (c.tscal !== undefined) cards.push(fitsCard(`TSCAL${n}`, c.tscal));
    if (c.tzero !== undefined) cards.push(fitsCard(`TZERO${n}`, c.tzero));
  });
  cards.push(...(options.extraCards ?? []));
  const out: Buffer[] = [fitsHeader(cards)];
  const chunkRows = Math.max(1, options.chunkRows ?? 65536);
  let written = 0;
  for (let first = 0; first < rows; first += chunkRows) {
    const n = Math.min(chunkRows, rows - first);
    const buf = Buffer.alloc(n * rowBytes);
    let off = 0;
    for (let k = 0; k < columns.length; k++) {
      const { write, width } = layouts[k];
      if (write) {
        const values = columns[k].values;
        for (let i = 0; i < n; i++) write(buf, i * rowBytes + off, values[first + i]);
      }
      off += width;
    }
    out.push(buf);
    written += buf.length;
  }
  const pad = Math.ceil(written / BLOCK) * BLOCK - written;
  if (pad > 0) out.push(Buffer.alloc(pad));
  return out;
}

/** A whole file: the default primary HDU and one table. */
export function fitsTableFile(columns: readonly FitsColumn[], options: BintableOptions = {}): Buffer {
  return Buffer.concat([fitsPrimary(), ...fitsBintable(columns, options)]);
}

// ---- VOTable ---------------------------------------------------------------------------------

const VO_TYPE: Readonly<Record<CellType, string>> = {
  double: 'double',
  float: 'float',
  int16: 'short',
  int32: 'int',
  int64: 'long',
  uint8: 'unsignedByte',
  bool: 'boolean',
  string: 'char',
};

export interface VoColumn extends TableColumn {
  /** Overrides the datatype the type implies (e.g. 'unicodeChar', 'floatComplex'). */
  datatype?: string;
  arraysize?: string;
  /** `<VALUES null="...">` for integer columns. */
  nullValue?: string;
}

export interface VoTable {
  name?: string;
  description?: string;
  columns: readonly VoColumn[];
}

export interface VotableOptions {
  encoding?: 'tabledata' | 'binary2' | 'binary';
  version?: string;
  /** A namespace prefix for every element (`vot` writes <vot:TABLE>), or none. */
  prefix?: string;
  /** Characters per base64 line. */
  lineWidth?: number;
  rowsPerChunk?: number;
}

const xml = (s: string) => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;');

function fieldXml(c: VoColumn, el: (n: string) => string): string {
  const datatype = c.datatype ?? VO_TYPE[c.type];
  const arraysize = c.arraysize ?? (c.type === 'string' && (datatype === 'char' || datatype === 'unicodeChar') ? '*' : undefined);
  const attrs = [
    `name="${xml(c.name)}"`,
    `datatype="${datatype}"`,
    arraysize !== undefined ? `arraysize="${arraysize}"` : '',
    c.unit !== undefined ? `unit="${xml(c.unit)}"` : '',
    c.ucd !== undefined ? `ucd="${xml(c.ucd)}"` : '',
  ].filter(Boolean);
  const inner = [
    c.description !== undefined ? `<${el('DESCRIPTION')}>${xml(c.description)}</${el('DESCRIPTION')}>` : '',
    c.nullValue !== undefined ? `<${el('VALUES')} null="${xml(c.nullValue)}"/>` : '',
  ].join('');
  return inner === '' ? `   <${el('FIELD')} ${attrs.join(' ')}/>\n` : `   <${el('FIELD')} ${attrs.join(' ')}>${inner}</${el('FIELD')}>\n`;
}

function tdText(c: VoColumn, v: Cell): string {
  if (v === null) return '';
  if (c.type === 'bool') return v ? 'T' : 'F';
  if (typeof v === 'number' && Number.isNaN(v)) return 'NaN';
  return xml(String(v));
}

/** Big-endian bytes of one BINARY cell. */
function binaryCell(c: VoColumn, v: Cell): Buffer {
  const datatype = c.datatype ?? VO_TYPE[c.type];
  const nullInt = c.nullValue !== undefined ? Number(c.nullValue) : 0;
  const sizes: Record<string, number> = { double: 8, float: 4, long: 8, int: 4, short: 2, unsignedByte: 1, boolean: 1, floatComplex: 8, doubleComplex: 16, bit: 1 };
  if (datatype !== 'char' && datatype !== 'unicodeChar' && (c.arraysize !== undefined || !(datatype in sizes) || /Complex|bit/.test(datatype))) {
    // Arrays of numbers, complex values, bits: fixed-size zero bytes (the reader leaves them out).
    return Buffer.alloc((sizes[datatype] ?? 8) * (c.arraysize && !c.arraysize.includes('*') ? Number(c.arraysize) : 1));
  }
  switch (datatype) {
    case 'double': {
      const b = Buffer.alloc(8);
      b.writeDoubleBE(v === null ? NaN : Number(v));
      return b;
    }
    case 'float': {
      const b = Buffer.alloc(4);
      b.writeFloatBE(v === null ? NaN : Number(v));
      return b;
    }
    case 'short': {
      const b = Buffer.alloc(2);
      b.writeInt16BE(v === null ? nullInt : Number(v));
      return b;
    }
    case 'int': {
      const b = Buffer.alloc(4);
      b.writeInt32BE(v === null ? nullInt : Number(v));
      return b;
    }
    case 'long': {
      const b = Buffer.alloc(8);
      b.writeBigInt64BE(BigInt(v === null ? (c.nullValue ?? 0) : (v as number | bigint)));
      return b;
    }
    case 'unsignedByte':
      return Buffer.from([v === null ? nullInt : Number(v)]);
    case 'boolean':
      return Buffer.from([v === null ? 0x3f : v ? 0x54 : 0x46]);
    case 'char':
    case 'unicodeChar': {
      let bytes = Buffer.from(v === null ? '' : String(v), datatype === 'char' ? 'utf8' : 'utf16le');
      if (datatype === 'unicodeChar') bytes = Buffer.from(bytes).swap16();
      if (c.arraysize !== undefined && !c.arraysize.endsWith('*')) {
        const fixed = Buffer.alloc(Number(c.arraysize) * (datatype === 'char' ? 1 : 2));
        bytes.copy(fixed, 0, 0, Math.min(bytes.length, fixed.length));
        return fixed;
      }
      const count = Buffer.alloc(4);
      count.writeUInt32BE(bytes.length / (datatype === 'char' ? 1 : 2));
      return Buffer.concat([count, bytes]);
    }
    default:
      throw new Error(`no BINARY writer for datatype ${datatype}`);
  }
}

/** A VOTable document with the given tables, in pieces. */
export function votable(tables: readonly VoTable[], options: VotableOptions = {}): string[] {
  const enc = options.encoding ?? 'tabledata';
  const el = (n: string) => (options.prefix ? `${options.prefix}:${n}` : n);
  const ns = options.prefix ? `xmlns:${options.prefix}` : 'xmlns';
  const out: string[] = [
    '<?xml version="1.0" encoding="UTF-8"?>\n',
    `<${el('VOTABLE')} version="${options.version ?? '1.4'}" ${ns}="http://www.ivoa.net/xml/VOTable/v1.3">\n`,
    ` <${el('RESOURCE')}>\n`,
  ];
  const rowsPerChunk = options.rowsPerChunk ?? 20000;
  for (const t of tables) {
    out.push(`  <${el('TABLE')}${t.name ? ` name="${xml(t.name)}"` : ''}>\n`);
    if (t.description) out.push(`   <${el('DESCRIPTION')}>${xml(t.description)}</${el('DESCRIPTION')}>\n`);
    for (const c of t.columns) out.push(fieldXml(c, el));
    out.push(`   <${el('DATA')}>\n`);
    const rows = rowsOf(t.columns);
    if (enc === 'tabledata') {
      out.push(`    <${el('TABLEDATA')}>\n`);
      const TR = el('TR');
      const TD = el('TD');
      for (let first = 0; first < rows; first += rowsPerChunk) {
        let s = '';
        for (let i = first; i < Math.min(rows, first + rowsPerChunk); i++) {
          s += `     <${TR}>`;
          for (const c of t.columns) {
            const v = tdText(c, c.values[i]);
            s += v === '' ? `<${TD}/>` : `<${TD}>${v}</${TD}>`;
          }
          s += `</${TR}>\n`;
        }
        out.push(s);
      }
      out.push(`    </${el('TABLEDATA')}>\n`);
    } else {
      const flags = enc === 'binary2';
      const tag = flags ? 'BINARY2' : 'BINARY';
      out.push(`    <${el(tag)}>\n     <${el('STREAM')} encoding="base64">\n`);
      const width = options.lineWidth ?? 76;
      let carry = Buffer.alloc(0);
      for (let first = 0; first < rows; first += rowsPerChunk) {
        const parts: Buffer[] = [carry];
        for (let i = first; i < Math.min(rows, first + rowsPerChunk); i++) {
          if (flags) {
            const f = Buffer.alloc((t.columns.length + 7) >> 3);
            t.columns.forEach((c, k) => {
              if (c.values[i] === null) f[k >> 3] |= 0x80 >> (k & 7);
            });
            parts.push(f);
          }
          for (const c of t.columns) parts.push(binaryCell(c, c.values[i]));
        }
        const all = Buffer.concat(parts);
        const last = first + rowsPerChunk >= rows;
        const usable = last ? all.length : all.length - (all.length % 3);
        carry = all.subarray(usable);
        const b64 = all.subarray(0, usable).toString('base64');
        let s = '';
        for (let k = 0; k < b64.length; k += width) s += b64.slice(k, k + width) + '\n';
        out.push(s);
      }
      out.push(`     </${el('STREAM')}>\n    </${el(tag)}>\n`);
    }
    out.push(`   </${el('DATA')}>\n  </${el('TABLE')}>\n`);
  }
  out.push(` </${el('RESOURCE')}>\n</${el('VOTABLE')}>\n`);
  return out;
}

// ---- ECSV ------------------------------------------------------------------------------------

const ECSV_TYPE: Readonly<Record<CellType, string>> = {
  double: 'float64',
  float: 'float32',
  int16: 'int16',
  int32: 'int32',
  int64: 'int64',
  uint8: 'uint8',
  bool: 'bool',
  string: 'string',
};

export interface EcsvOptions {
  delimiter?: ' ' | ',';
  /** Extra YAML lines (without `# `) after the datatype list. */
  extraYaml?: readonly string[];
  rowsPerChunk?: number;
}

function ecsvField(v: Cell, delimiter: string): string {
  if (v === null) return delimiter === ' ' ? '""' : '';
  if (typeof v === 'boolean') return v ? 'True' : 'False';
  if (typeof v === 'number' && Number.isNaN(v)) return delimiter === ' ' ? '""' : '';
  const s = String(v);
  return s === '' || s.includes(delimiter) || s.includes('"') || s.includes('\n') ? `"${s.replace(/"/g, '""')}"` : s;
}

export function ecsv(columns: readonly TableColumn[], options: EcsvOptions = {}): string[] {
  const d = options.delimiter ?? ' ';
  const head = ['# %ECSV 1.0', '# ---'];
  if (d !== ' ') head.push("# delimiter: ','");
  head.push('# datatype:');
  for (const c of columns) {
    const parts = [`name: ${JSON.stringify(c.name)}`];
    if (c.unit !== undefined) parts.push(`unit: ${JSON.stringify(c.unit)}`);
    parts.push(`datatype: ${ECSV_TYPE[c.type]}`);
    if (c.description !== undefined) parts.push(`description: ${JSON.stringify(c.description)}`);
    head.push(`# - {${parts.join(', ')}}`);
  }
  for (const y of options.extraYaml ?? []) head.push(`# ${y}`);
  head.push(columns.map((c) => ecsvField(c.name, d)).join(d));
  const out = [head.join('\n') + '\n'];
  const rows = rowsOf(columns);
  const per = options.rowsPerChunk ?? 20000;
  for (let first = 0; first < rows; first += per) {
    let s = '';
    for (let i = first; i < Math.min(rows, first + per); i++) s += columns.map((c) => ecsvField(c.values[i], d)).join(d) + '\n';
    out.push(s);
  }
  return out;
}

// ---- Parquet ---------------------------------------------------------------------------------

export interface ParquetOptions {
  compression?: 'UNCOMPRESSED' | 'SNAPPY' | 'GZIP' | 'ZSTD';
  rowGroupRows?: number;
}

const ARROW_TYPE = {
  double: () => new Float64(),
  float: () => new Float32(),
  int16: () => new Int16(),
  int32: () => new Int32(),
  int64: () => new Int64(),
  uint8: () => new Uint8(),
  bool: () => new Bool(),
  string: () => new Utf8(),
} as const;

/** An Arrow IPC stream of the columns, with unit/ucd/description as field metadata. */
export function arrowStream(columns: readonly TableColumn[]): Uint8Array {
  const fields: Field[] = [];
  const data = columns.map((c) => {
    const meta = new Map<string, string>();
    if (c.unit !== undefined) meta.set('unit', c.unit);
    if (c.ucd !== undefined) meta.set('ucd', c.ucd);
    if (c.description !== undefined) meta.set('description', c.description);
    const type = ARROW_TYPE[c.type]();
    fields.push(new Field(c.name, type, true, meta));
    const values = c.type === 'int64' ? c.values.map((v) => (v === null ? null : BigInt(v as number | bigint))) : c.values;
    return vectorFromArray(values as unknown[], type).data[0];
  });
  const schema = new Schema(fields);
  const length = rowsOf(columns);
  const struct = makeData({ type: new Struct(fields), length, nullCount: 0, children: data });
  return tableToIPC(new Table([new RecordBatch(schema, struct)]), 'stream');
}

/** Parquet bytes through parquet-wasm (a devDependency: only tests and the converter write Parquet). */
export async function parquet(columns: readonly TableColumn[], options: ParquetOptions = {}): Promise<Uint8Array> {
  const pw = await import('parquet-wasm/node');
  const table = pw.Table.fromIPCStream(arrowStream(columns));
  const props = new pw.WriterPropertiesBuilder()
    .setCompression(pw.Compression[options.compression ?? 'ZSTD'])
    .setMaxRowGroupSize(options.rowGroupRows ?? 65536)
    .build();
  return pw.writeParquet(table, props);
}
