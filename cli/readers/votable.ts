/**
 * VOTable 1.3 / 1.4 (IVOA), read as a stream with saxes. One TABLE is read (the first by default,
 * `--table N` for another); its FIELDs give the columns with their unit, UCD and description.
 * Two serializations of the data are read:
 *
 * - TABLEDATA: one TR per row, one TD per cell. Cells stay text, exactly as written, so the
 *   binder parses them as it parses CSV (a stray word in a numeric column is reported, not lost);
 *   an empty TD is null, and so is a VALUES null magic value; hex integers become decimal.
 * - BINARY2 (and the older BINARY): base64 in a STREAM element, decoded as it arrives; each row
 *   is null-flag bytes (BINARY2 only) then big-endian cells. Numbers go straight into typed arrays.
 *
 * Elements are matched by local name, so a document with a prefix or an older namespace reads
 * the same. FIELDs the linter cannot use (bits, complex, arrays of numbers) are left out with a
 * note. Broken XML, bad base64 and a stream cut short are InputErrors with the line and column.
 */
import { SaxesParser, type SaxesTagPlain } from 'saxes';
import type { Readable } from 'node:stream';
import { batchSizeOf, describeIoError, uniqueColumnNames } from './common.js';
import { opened, type InputSource } from './source.js';
import {
  InputError,
  type CatalogReader,
  type ColumnMeta,
  type MalformedRecord,
  type RawBatch,
  type RawColumn,
  type ReaderOptions,
  type ReaderStats,
} from './types.js';
import { decimalInteger, isKnownDatatype, logicalByte, logicalText, planField, type FieldPlan, type VoField } from './votable-fields.js';

export interface VotableOptions extends ReaderOptions {
  /** Which TABLE to read, 1 = the first in document order (the default). */
  table?: number;
  /** Bytes per read; tests make it tiny. */
  readChunkBytes?: number;
}

const VOTABLE_NAMESPACES = new Set([
  'http://www.ivoa.net/xml/VOTable/v1.3',
  'http://www.ivoa.net/xml/VOTable/v1.2',
  'http://www.ivoa.net/xml/VOTable/v1.1',
  'http://www.ivoa.net/xml/VOTable/v1.0',
]);
const BASE64_TEXT = /^[A-Za-z0-9+/=]*$/;
/** A STREAM start tag (any prefix). Its text is routed around saxes, which would buffer all of it. */
const STREAM_OPEN = /<(?:[A-Za-z_][\w.-]*:)?STREAM(?:\s[^>]*)?\/?>/;
/** Longest tag held back at a chunk's end while waiting to see whether it starts a STREAM. */
const MAX_HELD_TAG = 4096;
const WHITESPACE = /\s+/g;
/** Literal words some writers put in a cell for "no value" (astropy's `None` among them). */
const NULL_WORDS = new Set(['None', 'none', 'null', 'NULL', '--']);

/** True when the first bytes are XML that names a VOTABLE element. */
export function looksLikeVotable(head: Uint8Array): boolean {
  let text = Buffer.from(head.buffer, head.byteOffset, head.byteLength).toString('utf8');
  if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
  return /^\s*</.test(text) && /<([A-Za-z_][\w.-]*:)?VOTABLE[\s>]/.test(text);
}

export async function openVotable(src: InputSource, options: VotableOptions = {}): Promise<CatalogReader> {
  return opened(new VotableReader(src, options));
}

const localName = (name: string) => {
  const colon = name.indexOf(':');
  return colon === -1 ? name : name.slice(colon + 1);
};

type PlainOptions = { position: true; xmlns: false };
type Mode = 'none' | 'tabledata' | 'binary' | 'binary2';

class VotableReader implements CatalogReader {
  readonly format = 'votable';
  readonly path: string;
  columns: ColumnMeta[] = [];
  readonly stats: ReaderStats = { records: 0, rows: 0, unparseable: 0 };
  readonly notes: string[] = [];

  private readonly name: string;
  private readonly batchSize: number;
  private readonly target: number;
  private readonly stream: Readable;
  private readonly source: AsyncIterator<string>;
  private readonly parser: SaxesParser<PlainOptions>;
  private started = false;
  private closed = false;
  private eof = false;

  // document state
  private root = true;
  private tables = 0;
  private inTarget = false;
  private done = false;
  private columnsReady = false;
  private fields: VoField[] = [];
  private field: VoField | null = null;
  private inDescription = false;
  private description = '';
  private mode: Mode = 'none';

  // columns and the batch being filled
  private plans: FieldPlan[] = [];
  private outKinds: ('text' | 'number')[] = [];
  private texts: (string | null)[][] = [];
  private numbers: Float64Array[] = [];
  private nulls: (Uint8Array | null)[] = [];
  private lines: Int32Array | null = null;
  private malformed: MalformedRecord[] = [];
  private n = 0;
  private ready: RawBatch[] = [];

  // TABLEDATA
  private cell = -1;
  private inTd = false;
  private tdText = '';
  private rowLine = 0;
  private nullWords = new Map<string, number>();

  // BINARY / BINARY2
  private inStream = false;
  private base64Rest = '';
  private padded = false;
  private bytes: Buffer = Buffer.alloc(0);
  private fixedRowBytes: number | null = null;
  /** Raw text held back: a tag cut by the chunk boundary that may be a STREAM start. */
  private carry = '';
  /** Inside a STREAM's text, which goes to the base64 decoder without passing through saxes. */
  private passthrough = false;

  constructor(
    private readonly src: InputSource,
    options: VotableOptions,
  ) {
    this.path = src.path;
    this.name = src.name;
    this.batchSize = batchSizeOf(options.batchSize);
    const t = options.table ?? 1;
    if (!Number.isInteger(t) || t < 1) throw new InputError(`--table must be a whole number from 1 (the first TABLE), not ${t}`, src.path);
    this.target = t;
    this.stream = src.text(options.readChunkBytes);
    this.source = this.stream[Symbol.asyncIterator]() as AsyncIterator<string>;
    const p = new SaxesParser<PlainOptions>({ position: true, xmlns: false });
    p.on('error', (e) => {
      // Past the chosen table the rest of the document is not read; a flaw there is not ours to report.
      if (!this.done) throw this.xmlError(e.message);
    });
    p.on('opentag', (tag) => this.openTag(tag));
    p.on('closetag', (tag) => this.closeTag(tag));
    p.on('text', (text) => this.text(text));
    p.on('cdata', (text) => this.text(text));
    this.parser = p;
  }

  async open(): Promise<void> {
    while (!this.columnsReady) {
      if (this.eof) {
        throw new InputError(
          this.tables === 0
            ? `${this.name}: the VOTable holds no TABLE`
            : `${this.name}: the VOTable holds ${this.tables} TABLE${this.tables === 1 ? '' : 's'}, so there is no TABLE ${this.target}`,
          this.path,
        );
      }
      await this.pump();
    }
  }

  async *batches(): AsyncGenerator<RawBatch> {
    if (this.started) throw new Error('CatalogReader.batches() can be iterated only once');
    this.started = true;
    try {
      for (;;) {
        while (this.ready.length > 0) yield this.ready.shift()!;
        if (this.done || this.eof) break;
        await this.pump();
      }
      if (!this.done) throw new InputError(`${this.name}: the document ends inside TABLE ${this.target} (truncated file?)`, this.path, this.here());
      if (this.n > 0 || this.malformed.length > 0) yield this.finishBatch();
      this.noteNullWords();
    } finally {
      await this.close();
    }
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    this.stream.destroy();
  }

  // ---- input -------------------------------------------------------------------------------

  /** Feeds one more chunk to the parser (or ends it). */
  private async pump(): Promise<void> {
    let r: IteratorResult<string>;
    try {
      r = await this.source.next();
    } catch (err) {
      if (err instanceof InputError) throw err;
      throw new InputError(`cannot read ${this.name}: ${describeIoError(err)}`, this.path, this.here());
    }
    if (r.done) {
      this.eof = true;
      if (!this.done) {
        if (this.carry !== '') this.parser.write(this.carry);
        this.parser.close();
      }
      return;
    }
    let chunk = r.value;
    if (this.root && chunk.charCodeAt(0) === 0xfeff) chunk = chunk.slice(1);
    this.feed(chunk);
  }

  /**
   * Hands text to saxes, except the text of a STREAM: saxes keeps a whole text node in memory
   * before it reports it, and a BINARY2 stream is the whole table. That text goes straight to
   * the decoder; saxes is given only its newlines, so its line numbers stay right.
   */
  private feed(text: string): void {
    let t = this.carry + text;
    this.carry = '';
    while (t.length > 0 && !this.done) {
      if (this.passthrough) {
        const lt = t.indexOf('<');
        const body = lt === -1 ? t : t.slice(0, lt);
        if (body.length > 0) {
          const newlines = countNewlines(body);
          if (this.inStream) this.base64(body, this.parser.line);
          if (newlines > 0) this.parser.write('\n'.repeat(newlines));
        }
        if (lt === -1) return;
        this.passthrough = false;
        t = t.slice(lt);
        continue;
      }
      const m = STREAM_OPEN.exec(t);
      if (m) {
        const end = m.index + m[0].length;
        this.parser.write(t.slice(0, end));
        this.passthrough = !m[0].endsWith('/>');
        t = t.slice(end);
        continue;
      }
      const lt = t.lastIndexOf('<');
      if (lt !== -1 && t.indexOf('>', lt) === -1 && t.length - lt < MAX_HELD_TAG) {
        this.parser.write(t.slice(0, lt));
        this.carry = t.slice(lt);
        return;
      }
      this.parser.write(t);
      return;
    }
  }

  private here(): string {
    return `line ${this.parser.line}, column ${this.parser.column + 1}`;
  }

  private xmlError(message: string): InputError {
    const m = /^(\d+):(\d+): (.*)$/s.exec(message);
    const where = m ? `line ${m[1]}, column ${Number(m[2]) + 1}` : this.here();
    const what = m ? m[3] : message;
    return new InputError(`${this.name}, ${where}: not well-formed XML: ${what.replace(/\.$/, '')}`, this.path, where);
  }

  private fail(message: string): never {
    throw new InputError(`${this.name}, ${this.here()}: ${message}`, this.path, this.here());
  }

  // ---- XML events --------------------------------------------------------------------------

  private openTag(tag: SaxesTagPlain): void {
    if (this.done) return;
    const local = localName(tag.name);
    const attrs = tag.attributes as Record<string, string>;
    if (this.root) {
      this.root = false;
      if (local !== 'VOTABLE') this.fail(`the root element is <${tag.name}>, not <VOTABLE>: this is not a VOTable`);
      const version = attrs.version;
      if (version !== undefined && !/^1\.[0-6]$/.test(version)) this.notes.push(`VOTable version ${version}; read with the rules of 1.4`);
      const ns = Object.entries(attrs).find(([k]) => k === 'xmlns' || k.startsWith('xmlns:'))?.[1];
      if (ns !== undefined && !VOTABLE_NAMESPACES.has(ns)) this.notes.push(`the VOTABLE namespace is ${ns}, not the IVOA one; elements were read by name`);
      return;
    }
    if (local === 'TABLE') {
      this.tables++;
      if (this.tables === this.target) this.inTarget = true;
      return;
    }
    if (!this.inTarget) return;
    switch (local) {
      case 'FIELD':
        if (this.mode !== 'none') return;
        this.field = {
          name: attrs.name ?? attrs.ID ?? '',
          datatype: attrs.datatype ?? '',
          arraysize: attrs.arraysize ?? null,
          unit: attrs.unit ?? null,
          ucd: attrs.ucd ?? null,
          description: null,
          nullValue: null,
        };
        this.fields.push(this.field);
        if (tag.isSelfClosing) this.field = null;
        return;
      case 'VALUES':
        if (this.field !== null && attrs.null !== undefined) this.field.nullValue = attrs.null;
        return;
      case 'DESCRIPTION':
        if (this.field !== null) {
          this.inDescription = true;
          this.description = '';
        }
        return;
      case 'TABLEDATA':
        this.startData('tabledata');
        return;
      case 'BINARY':
        this.startData('binary');
        return;
      case 'BINARY2':
        this.startData('binary2');
        return;
      case 'FITS':
        return this.fail('this TABLE keeps its data in a FITS file (the FITS serialization); read that FITS file directly');
      case 'STREAM':
        if (this.mode === 'binary' || this.mode === 'binary2') {
          if (attrs.href !== undefined) this.fail(`the data are in a remote STREAM (href="${attrs.href}"); starsieve reads inline data only, so fetch the file first`);
          const enc = attrs.encoding ?? '';
          if (enc !== 'base64') this.fail(`STREAM encoding "${enc}" is not supported; inline binary data must be encoding="base64"`);
          this.inStream = true;
        }
        return;
      case 'TR':
        if (this.mode !== 'tabledata') return;
        this.cell = 0;
        this.rowLine = this.parser.line;
        return;
      case 'TD':
        if (this.mode !== 'tabledata' || this.cell < 0) return;
        this.inTd = true;
        this.tdText = '';
        return;
    }
  }

  private closeTag(tag: SaxesTagPlain): void {
    if (this.done) return;
    const local = localName(tag.name);
    if (!this.inTarget) return;
    switch (local) {
      case 'FIELD':
        this.field = null;
        return;
      case 'DESCRIPTION':
        if (this.inDescription && this.field !== null) this.field.description = this.description.trim() || null;
        this.inDescription = false;
        return;
      case 'TD':
        if (!this.inTd) return;
        this.inTd = false;
        this.tdCell(this.tdText);
        this.cell++;
        return;
      case 'TR':
        if (this.mode === 'tabledata' && this.cell >= 0) this.endTr();
        this.cell = -1;
        return;
      case 'STREAM':
        if (this.inStream) this.endStream();
        this.inStream = false;
        return;
      case 'TABLE':
        if (!this.columnsReady) this.planColumns();
        this.inTarget = false;
        this.done = true;
        return;
    }
  }

  private text(t: string): void {
    if (this.inTd) this.tdText += t;
    else if (this.inStream) this.base64(t, null);
    else if (this.inDescription) this.description += t;
  }

  // ---- columns and batches -----------------------------------------------------------------

  private startData(mode: Mode): void {
    this.mode = mode;
    this.field = null;
    if (!this.columnsReady) this.planColumns();
  }

  private planColumns(): void {
    this.columnsReady = true;
    const kept: FieldPlan[] = [];
    this.plans = this.fields.map((f, i) => {
      if (!isKnownDatatype(f.datatype)) {
        this.fail(`FIELD ${i + 1}${f.name ? ` \`${f.name}\`` : ''} has datatype "${f.datatype}", which VOTable does not define`);
      }
      const p = planField(f, kept.length);
      if (p.kind === 'skip') {
        this.notes.push(
          `FIELD ${i + 1} \`${f.name}\` (datatype ${f.datatype}${f.arraysize ? `, arraysize ${f.arraysize}` : ''}) is not read: unsupported column type, ${p.skipReason}; the other columns are read`,
        );
      } else {
        kept.push(p);
      }
      return p;
    });
    const { names, notes } = uniqueColumnNames(kept.map((p) => p.field.name));
    this.notes.push(...notes);
    this.columns = kept.map((p, i) => ({
      name: names[i],
      unit: p.field.unit !== null && p.field.unit.trim() !== '' ? p.field.unit.trim() : null,
      ucd: p.field.ucd !== null && p.field.ucd.trim() !== '' ? p.field.ucd.trim() : null,
      description: p.field.description,
      type: p.kind === 'number' ? (/^(float|double)$/.test(p.field.datatype) ? 'float' : 'integer') : p.kind === 'long' ? 'integer' : p.kind === 'bool' ? 'boolean' : 'text',
    }));
    if (kept.length > 0 && this.columns.every((c) => c.unit === null)) {
      this.notes.push('no FIELD declares a unit; units come from the column names and values');
    }
    // TABLEDATA cells stay text; binary numbers go straight into typed arrays.
    this.outKinds = kept.map((p) => (this.mode !== 'tabledata' && p.kind === 'number' ? 'number' : 'text'));
    if (this.mode === 'binary' || this.mode === 'binary2') {
      const variable = this.plans.some((p) => p.count === null);
      this.fixedRowBytes = variable ? null : this.plans.reduce((a, p) => a + cellBytes(p, p.count!), this.mode === 'binary2' ? flagBytes(this.plans.length) : 0);
    }
    this.startBatch();
  }

  private startBatch(): void {
    const cap = this.batchSize;
    this.texts = this.outKinds.map((k) => (k === 'text' ? new Array<string | null>(cap) : []));
    this.numbers = this.outKinds.map((k) => (k === 'number' ? new Float64Array(cap) : new Float64Array(0)));
    this.nulls = this.outKinds.map(() => null);
    this.lines = this.mode === 'tabledata' ? new Int32Array(cap) : null;
    this.malformed = [];
    this.n = 0;
  }

  private finishBatch(): RawBatch {
    const n = this.n;
    const columns: RawColumn[] = this.outKinds.map((k, c) => {
      if (k === 'text') {
        const t = this.texts[c];
        t.length = n;
        return { kind: 'text', values: t };
      }
      const nl = this.nulls[c];
      return { kind: 'number', values: this.numbers[c].subarray(0, n), nulls: nl === null ? null : nl.subarray(0, n) };
    });
    const batch: RawBatch = {
      length: n,
      firstRow: this.stats.rows - n + 1,
      lines: this.lines === null ? null : this.lines.subarray(0, n),
      columns,
      malformed: this.malformed,
    };
    this.startBatch();
    return batch;
  }

  private endRow(): void {
    this.n++;
    this.stats.rows++;
    this.stats.records++;
    if (this.n === this.batchSize) this.ready.push(this.finishBatch());
  }

  // ---- TABLEDATA ---------------------------------------------------------------------------

  private tdCell(raw: string): void {
    const k = this.cell;
    if (k >= this.plans.length) return;
    const p = this.plans[k];
    if (p.kind === 'skip') return;
    const c = p.column;
    let v: string | null = raw;
    if (raw.length === 0) v = null;
    else if (p.kind === 'bool') v = logicalText(raw);
    else if (p.kind === 'number' || p.kind === 'long') {
      if (raw.indexOf('x') !== -1 || raw.indexOf('X') !== -1) v = decimalInteger(raw);
      if (p.field.nullValue !== null && raw.trim() === p.field.nullValue.trim()) v = null;
      else if (p.nullNumber !== null && Number(v) === p.nullNumber) v = null;
    }
    if (v !== null && v.length <= 4 && NULL_WORDS.has(v)) this.nullWords.set(p.field.name, (this.nullWords.get(p.field.name) ?? 0) + 1);
    this.texts[c][this.n] = v;
  }

  private endTr(): void {
    const got = this.cell;
    const want = this.plans.length;
    const i = this.n;
    for (let k = got; k < want; k++) {
      const p = this.plans[k];
      if (p.kind !== 'skip') this.texts[p.column][i] = null;
    }
    if (got !== want) {
      this.malformed.push({
        index: i,
        line: this.rowLine,
        message:
          got < want
            ? `line ${this.rowLine}: the row has ${got} TD cell${got === 1 ? '' : 's'}, the table ${want} FIELDs; the missing ${want - got} are empty`
            : `line ${this.rowLine}: the row has ${got} TD cells, the table ${want} FIELDs; the extra ${got - want} were dropped`,
      });
    }
    this.lines![i] = this.rowLine;
    this.endRow();
  }

  private noteNullWords(): void {
    if (this.nullWords.size === 0) return;
    const total = [...this.nullWords.values()].reduce((a, b) => a + b, 0);
    const words = [...this.nullWords.keys()];
    const shown = words.slice(0, 6).map((w) => `\`${w}\``).join(', ');
    this.notes.push(
      `${total} cell${total === 1 ? '' : 's'} hold a word such as \`None\` instead of a value (in ${words.length} column${words.length === 1 ? '' : 's'}: ${shown}${words.length > 6 ? ', ...' : ''}); ` +
        'they are read as missing values',
    );
  }

  // ---- BINARY / BINARY2 --------------------------------------------------------------------

  /** `startLine`: the line the text starts on, when saxes has not counted its newlines yet. */
  private base64(t: string, startLine: number | null): void {
    const clean = t.indexOf(' ') === -1 && t.indexOf('\n') === -1 && t.indexOf('\t') === -1 && t.indexOf('\r') === -1 ? t : t.replace(WHITESPACE, '');
    if (clean.length === 0) return;
    if (!BASE64_TEXT.test(clean)) {
      const bad = /[^A-Za-z0-9+/=\s]/.exec(t)!;
      const line =
        startLine !== null ? startLine + countNewlines(t.slice(0, bad.index)) : this.parser.line - countNewlines(t.slice(bad.index + 1));
      throw new InputError(
        `${this.name}, line ${line}: the STREAM is not valid base64 (character ${JSON.stringify(bad[0])}); the binary data cannot be decoded`,
        this.path,
        `line ${line}`,
      );
    }
    if (this.padded) this.fail('the base64 STREAM goes on after its closing `=` padding');
    const all = this.base64Rest + clean;
    const usable = all.length - (all.length % 4);
    this.base64Rest = all.slice(usable);
    if (usable === 0) return;
    const chunk = all.slice(0, usable);
    if (chunk.indexOf('=') !== -1) {
      if (!/^[^=]*={0,2}$/.test(chunk) || this.base64Rest !== '') this.fail('`=` padding in the middle of the base64 STREAM');
      this.padded = true;
    }
    const decoded = Buffer.from(chunk, 'base64');
    this.bytes = this.bytes.length === 0 ? decoded : Buffer.concat([this.bytes, decoded]);
    this.decodeRows();
  }

  private endStream(): void {
    if (this.base64Rest !== '') {
      this.fail(`the base64 STREAM ends with ${this.base64Rest.length} stray character${this.base64Rest.length === 1 ? '' : 's'} (its length is not a multiple of 4: truncated?)`);
    }
    if (this.bytes.length > 0) {
      this.fail(`the binary data end inside row ${this.stats.rows + 1} (${this.bytes.length} bytes of an incomplete row): the STREAM is truncated`);
    }
  }

  /** Decodes every complete row in `bytes` and keeps the incomplete rest. */
  private decodeRows(): void {
    const buf = this.bytes;
    const view = new DataView(buf.buffer, buf.byteOffset, buf.byteLength);
    const flags = this.mode === 'binary2';
    let pos = 0;
    for (;;) {
      const len = this.fixedRowBytes ?? rowLength(view, pos, this.plans, flags);
      if (len < 0 || pos + len > buf.length) break;
      this.decodeRow(buf, view, pos, flags);
      pos += len;
    }
    this.bytes = pos === 0 ? buf : buf.subarray(pos);
  }

  private decodeRow(buf: Buffer, view: DataView, start: number, flags: boolean): void {
    const plans = this.plans;
    const i = this.n;
    let pos = start + (flags ? flagBytes(plans.length) : 0);
    for (let k = 0; k < plans.length; k++) {
      const p = plans[k];
      let count = p.count;
      if (count === null) {
        count = view.getUint32(pos);
        pos += 4;
      }
      const size = cellBytes(p, count);
      const isNull = flags && (buf[start + (k >> 3)] & (0x80 >> (k & 7))) !== 0;
      const c = p.column;
      if (p.kind === 'number') {
        const out = this.numbers[c];
        if (isNull) {
          out[i] = NaN;
          (this.nulls[c] ??= new Uint8Array(this.batchSize))[i] = 1;
        } else {
          const v = readNumber(view, pos, p.field.datatype);
          if (p.nullNumber !== null && v === p.nullNumber) {
            out[i] = NaN;
            (this.nulls[c] ??= new Uint8Array(this.batchSize))[i] = 1;
          } else {
            out[i] = v;
            const nl = this.nulls[c];
            if (nl !== null) nl[i] = 0;
          }
        }
      } else if (p.kind === 'long') {
        const v = isNull ? null : view.getBigInt64(pos);
        this.texts[c][i] = v === null || (p.nullBig !== null && v === p.nullBig) ? null : v.toString();
      } else if (p.kind === 'bool') {
        this.texts[c][i] = isNull ? null : logicalByte(buf[pos]);
      } else if (p.kind === 'text') {
        this.texts[c][i] = isNull ? null : readChars(buf, pos, size, p.field.datatype === 'unicodeChar');
      }
      pos += size;
    }
    this.endRow();
  }
}

function flagBytes(fields: number): number {
  return (fields + 7) >> 3;
}

function cellBytes(p: FieldPlan, count: number): number {
  return p.elementBytes === 0 ? Math.ceil(count / 8) : count * p.elementBytes;
}

/** Bytes of the row starting at `pos`, or -1 when its end has not arrived yet. */
function rowLength(view: DataView, pos: number, plans: FieldPlan[], flags: boolean): number {
  let at = pos + (flags ? flagBytes(plans.length) : 0);
  for (const p of plans) {
    let count = p.count;
    if (count === null) {
      if (at + 4 > view.byteLength) return -1;
      count = view.getUint32(at);
      at += 4;
    }
    at += cellBytes(p, count);
    if (at > view.byteLength) return -1;
  }
  return at - pos;
}

function readNumber(view: DataView, pos: number, datatype: string): number {
  switch (datatype) {
    case 'double':
      return view.getFloat64(pos);
    case 'float':
      return view.getFloat32(pos);
    case 'int':
      return view.getInt32(pos);
    case 'short':
      return view.getInt16(pos);
    default:
      return view.getUint8(pos);
  }
}

/** A char (1 byte) or unicodeChar (UCS-2, big-endian) string, ended early by a NUL, trailing blanks dropped. */
function readChars(buf: Buffer, pos: number, size: number, unicode: boolean): string {
  let s: string;
  if (unicode) {
    const swapped = Buffer.from(buf.subarray(pos, pos + size)).swap16();
    s = swapped.toString('utf16le');
  } else {
    s = buf.toString('utf8', pos, pos + size);
  }
  const nul = s.indexOf('\u0000');
  if (nul !== -1) s = s.slice(0, nul);
  return s.replace(/ +$/, '');
}

function countNewlines(s: string): number {
  let n = 0;
  for (let i = s.indexOf('\n'); i !== -1; i = s.indexOf('\n', i + 1)) n++;
  return n;
}
