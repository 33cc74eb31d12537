/**
 * Delimited text (CSV, TSV, semicolon and pipe tables) read as a stream.
 *
 * papaparse does the field splitting, but we drive its low-level Parser ourselves instead of
 * handing it the stream: that way we always know exactly which text each parse call saw, which is
 * what lets us give every record its physical line number (papaparse's `row` is a data-row index,
 * not a line), cap how much text one broken record may hold, and recover after a quote that never
 * closes. Rows arrive from papaparse as arrays; they are transposed straight into one string array
 * per column, so everything downstream is columnar.
 *
 * Once the binder has said which columns the rules read (`selectColumns`), text without quotes
 * takes the fast path of csv-fast.ts instead: lines split with indexOf, numbers read straight into
 * Float64Arrays, unread columns skipped. Text with quotes still goes to papaparse, and both paths
 * give identical batches (a property test compares them).
 */
import { statSync, type ReadStream } from 'node:fs';
import type { Readable } from 'node:stream';
import Papa from 'papaparse';
import type { ParseError } from 'papaparse';
import { batchSizeOf, describeIoError, displayName, uniqueColumnNames } from './common.js';
import { BatchBuilder, CellMode, scannable } from './csv-fast.js';
import { opened, utf8FileStream } from './source.js';
import {
  InputError,
  type CatalogReader,
  type ColumnMeta,
  type RawBatch,
  type ReaderOptions,
  type ReaderStats,
} from './types.js';

export interface CsvOptions extends ReaderOptions {
  /**
   * Most characters one record may span while we wait for it to end. Past this the record is
   * treated as broken (almost always a quote that never closes), so memory stays bounded.
   */
  maxRecordChars?: number;
  /** Bytes per read from a file; tests make it tiny to put chunk boundaries everywhere. */
  readChunkBytes?: number;
  /** Text to read instead of opening `path` (a decompressing stream, for example); closed with the reader. */
  textStream?: Readable;
  /**
   * Called once with the comment lines above the header row (ECSV keeps its YAML header there)
   * and the header line itself; may name the delimiter. Throwing aborts the open.
   */
  onPreamble?: (comments: readonly PreambleLine[], headerLine: string) => { delimiter?: string } | void;
  /**
   * For a reader over one byte range of a file: blank lines are counted (see `blanks`) but not
   * noted, so the ranges' counts can be joined into the one note a whole read would give.
   */
  quietBlankLines?: boolean;
  /**
   * Physical lines between the header and the first line of the text that follows it, which the
   * text leaves out (a byte range read after the header lines): line numbers count them.
   */
  linesSkipped?: number;
}

/** Blank lines inside the data: how many, and the physical line of the first (0 when none). */
export interface BlankLines {
  count: number;
  firstLine: number;
}

export interface PreambleLine {
  /** Physical line number. */
  line: number;
  text: string;
}

const DEFAULT_MAX_RECORD_CHARS = 8 * 1024 * 1024;
/** Bigger reads mean fewer parse calls; 1 MiB keeps the per-call overhead negligible. */
const READ_CHUNK_BYTES = 1 << 20;
/** Tried in this order, so a tie between counts goes to the more common delimiter. */
const DELIMITER_CANDIDATES = [',', '\t', ';', '|'];
const NL = 10;
const HASH = 35;
const QUOTE = 34;
const CR_RE = /\r\n?/g;

/** The note for blank lines inside the data. */
export function blankLinesNote(count: number, firstLine: number): string {
  return (
    `${count} blank line${count === 1 ? '' : 's'} inside the data ` +
    `(the first at line ${firstLine}) ${count === 1 ? 'was skipped; it is not a record' : 'were skipped; they are not records'}`
  );
}

export async function openCsv(path: string, options: CsvOptions = {}): Promise<CatalogReader> {
  return opened(new CsvReader(path, options));
}

export class CsvReader implements CatalogReader {
  format: 'csv' | 'tsv' = 'csv';
  readonly path: string;
  columns: ColumnMeta[] = [];
  readonly stats: ReaderStats = { records: 0, rows: 0, unparseable: 0 };
  readonly notes: string[] = [];

  private readonly name: string;
  private readonly options: CsvOptions;
  private readonly batchSize: number;
  private readonly maxRecordChars: number;
  private readonly comments: boolean;
  private readonly stream: Readable;
  private readonly source: AsyncIterator<string | Buffer>;
  /** The file's size when the reader reads the file itself (not stdin, not a decompressed stream). */
  private fileBytes = 0;
  private parser: Papa.Parser | null = null;
  private ncols = 0;

  /** Text not yet turned into records; it always starts at the beginning of physical line `line`. */
  private buf = '';
  private line = 1;
  private eof = false;
  private atStart = true;
  /** A chunk ended in '\r': hold it back, the next chunk may start with the '\n' of a CRLF. */
  private pendingCR = false;
  /** Throwing away the rest of an over-long line that has no end in sight yet. */
  private skippingLine = false;
  /** Re-parse only once the buffer has doubled, so a record that spans many reads costs O(n). */
  private nextParseAt = 0;
  private started = false;
  private closed = false;

  private builder!: BatchBuilder;
  private ready: RawBatch[] = [];
  private delimiter = ',';

  private blankLines = 0;
  private firstBlankLine = 0;
  private firstDataLine = 0;
  /** Comment lines above the header, kept only for an onPreamble hook. */
  private preamble: PreambleLine[] = [];
  private preambleChars = 0;

  constructor(path: string, options: CsvOptions) {
    this.path = path;
    this.name = displayName(path);
    this.options = options;
    this.batchSize = batchSizeOf(options.batchSize);
    this.maxRecordChars = Math.max(1024, options.maxRecordChars ?? DEFAULT_MAX_RECORD_CHARS);
    // A '#' delimiter would make every row a comment; papaparse refuses the combination.
    this.comments = options.delimiter !== '#';
    if (options.textStream) {
      this.stream = options.textStream;
    } else if (path === '-') {
      process.stdin.setEncoding('utf8');
      this.stream = process.stdin;
    } else {
      // Decoding in the stream keeps multi-byte characters that straddle chunks intact.
      const highWaterMark = Math.max(1, options.readChunkBytes ?? READ_CHUNK_BYTES);
      // Bytes that are not UTF-8 still decode (as U+FFFD), but the first is reported as a note.
      this.stream = utf8FileStream(path, highWaterMark, (m) => this.notes.push(m));
      try {
        this.fileBytes = statSync(path).size;
      } catch {
        this.fileBytes = 0;
      }
    }
    this.source = this.stream[Symbol.asyncIterator]();
  }

  progress(): { done: number; total: number; unit: 'bytes' } | null {
    if (!this.fileBytes) return null;
    return { done: (this.stream as ReadStream).bytesRead, total: this.fileBytes, unit: 'bytes' };
  }

  /** Reads up to and including the header row, so `columns` is known before any batch. */
  async open(): Promise<void> {
    const explicit = parseDelimiterOption(this.options.delimiter, this.path);
    while (!this.skipPreamble()) {
      if (this.eof) {
        throw new InputError(
          `${this.name}: no header row found (the input is empty or holds only comment and blank lines)`,
          this.path,
        );
      }
      await this.readMore();
    }
    const firstNl = this.buf.indexOf('\n');
    const headerLine = firstNl === -1 ? this.buf : this.buf.slice(0, firstNl);
    const hooked = this.options.onPreamble?.(this.preamble, headerLine);
    this.preamble = [];
    const delimiter = explicit ?? hooked?.delimiter ?? detectDelimiter(headerLine);
    this.delimiter = delimiter;
    this.format = delimiter === '\t' ? 'tsv' : 'csv';
    this.parser = new Papa.Parser({
      delimiter,
      newline: '\n',
      quoteChar: '"',
      comments: this.comments ? '#' : false,
    });

    let header: string[];
    for (;;) {
      // Without quotes the header is its first line; parsing only that spares a pass over the chunk.
      const quoted = headerLine.indexOf('"') !== -1;
      const res = this.parser.parse(quoted ? this.buf : headerLine, 0, quoted && !this.eof);
      const rows = res.data as string[][];
      for (const e of res.errors as ParseError[]) {
        if (e.code === 'MissingQuotes' && e.row === 0) {
          throw new InputError(
            `${this.name}, line ${this.line}: the header row has a quoted name that is never closed`,
            this.path,
            `line ${this.line}`,
          );
        }
      }
      if (rows.length > 0) {
        header = rows[0];
        break;
      }
      if (this.buf.length > this.maxRecordChars) {
        throw new InputError(
          `${this.name}, line ${this.line}: the header row runs past ${this.maxRecordChars} characters without ending (a quote that is never closed?)`,
          this.path,
          `line ${this.line}`,
        );
      }
      await this.readMore();
    }
    // A quoted name may hold newlines; the data starts after all of them.
    const spanned = 1 + newlinesInFields(header);
    this.buf = this.buf.slice(skipNewlines(this.buf, 0, spanned));
    this.line += spanned;
    this.firstDataLine = this.line;
    this.line += this.options.linesSkipped ?? 0;

    const { names, notes } = uniqueColumnNames(header);
    this.notes.push(...notes);
    this.columns = names.map((name) => ({ name, unit: null, ucd: null, description: null, type: 'text' }));
    this.ncols = names.length;
    this.builder = new BatchBuilder(this.ncols, this.batchSize, this.stats, this.ready);
  }

  /**
   * From now on only these columns are read: those in `textIndices` as strings, the others as
   * numbers, straight from the text where a line has no quotes. Until this is called every column
   * is text.
   */
  selectColumns(indices: readonly number[], textIndices: readonly number[] = []): void {
    const modes = new Uint8Array(this.ncols);
    for (const i of indices) if (i >= 0 && i < this.ncols) modes[i] = CellMode.Number;
    for (const i of textIndices) if (i >= 0 && i < this.ncols) modes[i] = CellMode.Text;
    this.builder.setModes(modes);
  }

  async *batches(): AsyncGenerator<RawBatch> {
    if (this.started) throw new Error('CatalogReader.batches() can be iterated only once');
    this.started = true;
    try {
      for (;;) {
        if (this.eof || this.buf.length >= this.nextParseAt) this.consume(this.eof);
        while (this.ready.length > 0) yield this.ready.shift()!;
        if (this.eof) break;
        await this.readMore();
      }
      this.builder.flush();
      while (this.ready.length > 0) yield this.ready.shift()!;
      if (this.blankLines > 0 && !this.options.quietBlankLines) {
        this.notes.push(blankLinesNote(this.blankLines, this.firstBlankLine));
      }
    } finally {
      await this.close();
    }
  }

  /** True when the reader decodes the file's own bytes as UTF-8 (not stdin, gzip, or another encoding). */
  readsFileBytes(): boolean {
    return !this.options.textStream && this.path !== '-';
  }

  /** The physical line of the first data record (after the header and any comment lines above it). */
  dataStartLine(): number {
    return this.firstDataLine;
  }

  blanks(): BlankLines {
    return { count: this.blankLines, firstLine: this.firstBlankLine };
  }

  delimiterUsed(): string {
    return this.delimiter;
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    // stdin belongs to the process, not to us.
    if (this.path !== '-') this.stream.destroy();
  }

  // ---- input -------------------------------------------------------------------------------

  private async readMore(): Promise<void> {
    let next: IteratorResult<string | Buffer>;
    try {
      next = await this.source.next();
    } catch (err) {
      throw new InputError(
        `cannot read ${this.name}: ${describeIoError(err)}`,
        this.path,
        this.atStart ? null : `line ${this.line}`,
      );
    }
    if (next.done) {
      this.eof = true;
      if (this.pendingCR) {
        this.pendingCR = false;
        this.append('\n');
      }
      return;
    }
    let text = typeof next.value === 'string' ? next.value : next.value.toString('utf8');
    if (this.atStart) {
      this.atStart = false;
      if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
    }
    if (this.pendingCR) {
      this.pendingCR = false;
      text = '\r' + text;
    }
    // CRLF, and a lone CR, become '\n': one break per physical line, and one newline for the parser.
    if (text.indexOf('\r') !== -1) {
      if (text.charCodeAt(text.length - 1) === 13) {
        this.pendingCR = true;
        text = text.slice(0, -1);
      }
      text = text.replace(CR_RE, '\n');
    }
    this.append(text);
  }

  private append(text: string): void {
    if (this.skippingLine) {
      const nl = text.indexOf('\n');
      if (nl === -1) return;
      text = text.slice(nl + 1);
      this.line++;
      this.skippingLine = false;
    }
    this.buf = this.buf.length === 0 ? text : this.buf + text;
  }

  /**
   * Drops whole comment and blank lines before the header. True once the buffer starts with the
   * header and holds its first line completely (so the delimiter can be detected from it).
   */
  private skipPreamble(): boolean {
    const buf = this.buf;
    let pos = 0;
    let found = false;
    while (pos < buf.length) {
      const nl = buf.indexOf('\n', pos);
      if (nl === -1 && !this.eof) break;
      const end = nl === -1 ? buf.length : nl;
      const comment = this.comments && buf.charCodeAt(pos) === HASH;
      const skip = comment || buf.slice(pos, end).trim() === '';
      if (!skip) {
        found = true;
        break;
      }
      if (comment && this.options.onPreamble) this.keepPreamble(buf.slice(pos, end));
      pos = nl === -1 ? buf.length : nl + 1;
      if (nl !== -1) this.line++;
    }
    if (pos > 0) this.buf = buf.slice(pos);
    return found;
  }

  private keepPreamble(text: string): void {
    this.preambleChars += text.length;
    if (this.preambleChars > this.maxRecordChars) {
      throw new InputError(
        `${this.name}, line ${this.line}: the comment lines above the header run past ${this.maxRecordChars} characters`,
        this.path,
        `line ${this.line}`,
      );
    }
    this.preamble.push({ line: this.line, text });
  }

  // ---- records -----------------------------------------------------------------------------

  /** Turns as much of the buffer into records as is complete (all of it when `final`). */
  private consume(final: boolean): void {
    const parser = this.parser!;
    for (;;) {
      this.dropLeadingComments(final);
      const buf = this.buf;
      if (buf.length === 0) {
        this.nextParseAt = 0;
        return;
      }
      if (this.builder.scanning && scannable(buf)) {
        if (this.consumeFast(final)) continue;
        return;
      }
      const res = parser.parse(buf, 0, !final);
      const data = res.data as string[][];
      let usable = data.length;
      let unclosed = false;
      let badQuotes: Set<number> | null = null;
      for (const e of res.errors as ParseError[]) {
        if (e.code === 'MissingQuotes') {
          unclosed = true;
          usable = e.row ?? data.length - 1;
        } else if (e.code === 'InvalidQuotes') {
          if (e.row !== undefined) (badQuotes ??= new Set()).add(e.row);
        }
      }
      const at = this.takeRows(buf, data, usable, final && !unclosed, badQuotes);

      if (unclosed) {
        // papaparse put everything from the open quote to the end into one field. Rather than
        // lose all those lines, call only the line the record starts on broken and read on.
        this.buf = buf.slice(at.pos);
        this.line = at.line;
        this.dropLeadingComments(true);
        this.brokenRecord(
          this.line,
          `line ${this.line}: a quoted field opened on this line is never closed; the line was skipped and reading resumed on the next line`,
        );
        this.skipFirstLine();
        continue;
      }

      const consumed: number = res.meta.cursor;
      this.line = at.line + (consumed > at.pos ? countNewlines(buf, at.pos, consumed) : 0);
      this.buf = consumed >= buf.length ? '' : buf.slice(consumed);

      if (this.overlong(final)) continue;
      this.nextParseAt = Math.min(this.buf.length * 2, this.maxRecordChars + 1);
      return;
    }
  }

  /**
   * The fast path over a buffer without quotes: every complete line (all of them when `final`).
   * True when the caller should go round again (an over-long line was dropped).
   */
  private consumeFast(final: boolean): boolean {
    const buf = this.buf;
    const end = final ? buf.length : buf.lastIndexOf('\n') + 1;
    if (end > 0) {
      this.line += this.builder.scanLines(buf, 0, end, this.line, this.delimiter, this.comments, (line) => this.blank(line));
      this.buf = end >= buf.length ? '' : buf.slice(end);
    }
    if (this.overlong(final)) return true;
    this.nextParseAt = Math.min(Math.max(this.buf.length * 2, 1), this.maxRecordChars + 1);
    return false;
  }

  /** One record has grown past the cap with no end: treat it like an unclosed quote. */
  private overlong(final: boolean): boolean {
    if (final || this.buf.length <= this.maxRecordChars) return false;
    this.dropLeadingComments(false);
    // An endless comment line is still only a comment: drop it without calling it a record.
    if (!(this.comments && this.buf.charCodeAt(0) === HASH)) {
      this.brokenRecord(
        this.line,
        `line ${this.line}: the record starting here runs past ${this.maxRecordChars} characters without ending (a quote that is never closed?); the line was skipped and reading resumed on the next line`,
      );
    }
    this.skipFirstLine();
    return true;
  }

  private blank(line: number): void {
    if (this.blankLines === 0) this.firstBlankLine = line;
    this.blankLines++;
  }

  /**
   * Hands the first `count` parsed rows to the batch with their physical line numbers and
   * returns where (offset and line) the text after them starts.
   */
  private takeRows(
    buf: string,
    data: string[][],
    count: number,
    phantomPossible: boolean,
    badQuotes: Set<number> | null,
  ): { pos: number; line: number } {
    const startLine = this.line;
    const hasQuote = buf.indexOf('"') !== -1;
    // Without quotes and comment lines, row k simply sits on line startLine + k.
    const simple =
      !hasQuote && (!this.comments || (buf.charCodeAt(0) !== HASH && buf.indexOf('\n#') === -1));
    // papaparse leaves an empty row after a final newline; it is not a line of the file.
    const phantom = phantomPossible && buf.charCodeAt(buf.length - 1) === NL ? data.length - 1 : -1;

    if (simple) {
      for (let k = 0; k < count; k++) {
        this.takeRow(data[k], startLine + k, k === phantom, badQuotes !== null && badQuotes.has(k));
      }
      // Every row here is one line ended by a newline (bar the very last one of the input, where
      // the position no longer matters), so the rows account for all the consumed text.
      return { pos: buf.length, line: startLine + count };
    }

    let pos = 0;
    let line = startLine;
    let nextQuote = hasQuote ? buf.indexOf('"') : -1;
    for (let k = 0; k < count; k++) {
      if (this.comments) {
        while (buf.charCodeAt(pos) === HASH) {
          const nl = buf.indexOf('\n', pos);
          if (nl === -1) break;
          pos = nl + 1;
          line++;
        }
      }
      const row = data[k];
      let inner = 0;
      if (nextQuote !== -1) {
        if (nextQuote < pos) nextQuote = buf.indexOf('"', pos);
        const nl = buf.indexOf('\n', pos);
        if (nextQuote !== -1 && (nl === -1 || nextQuote < nl)) inner = newlinesInFields(row);
      }
      this.takeRow(row, line, k === phantom, badQuotes !== null && badQuotes.has(k));
      pos = skipNewlines(buf, pos, inner + 1);
      line += inner + 1;
    }
    return { pos, line };
  }

  private takeRow(row: string[], line: number, phantom: boolean, badQuotes: boolean): void {
    if (row.length === 1) {
      const only = row[0];
      if (only === '' || (only.charCodeAt(0) <= 32 && only.trim() === '')) {
        if (!phantom) this.blank(line);
        return;
      }
    }
    this.builder.addFields(row, line, badQuotes);
  }

  /** A record that yields no row: counted, reported, and its place in the batch is -1. */
  private brokenRecord(line: number, message: string): void {
    this.builder.broken(line, message);
  }

  /** Drops the buffer's first physical line; if its end has not arrived yet, discards up to it. */
  private skipFirstLine(): void {
    const nl = this.buf.indexOf('\n');
    if (nl === -1) {
      this.buf = '';
      this.skippingLine = !this.eof;
    } else {
      this.buf = this.buf.slice(nl + 1);
      this.line++;
    }
  }

  private dropLeadingComments(final: boolean): void {
    if (!this.comments) return;
    const buf = this.buf;
    let pos = 0;
    while (buf.charCodeAt(pos) === HASH) {
      const nl = buf.indexOf('\n', pos);
      if (nl === -1) {
        if (final) pos = buf.length;
        break;
      }
      pos = nl + 1;
      this.line++;
    }
    if (pos > 0) this.buf = buf.slice(pos);
  }

}

/** The delimiter option as given, with the spellings a shell user is likely to type for a tab. */
function parseDelimiterOption(value: string | undefined, path: string): string | undefined {
  if (value === undefined) return undefined;
  const d = value === 'tab' || value === '\\t' ? '\t' : value;
  if (d === '' || /[\r\n"\ufeff]/.test(d)) {
    throw new InputError(
      `unusable delimiter ${JSON.stringify(value)}: it must be non-empty and not a quote or line break`,
      path,
    );
  }
  return d;
}

/** The candidate seen most often outside quotes in the header line; ',' for a one-column file. */
export function detectDelimiter(headerLine: string): string {
  const counts = [0, 0, 0, 0];
  let quoted = false;
  for (let i = 0; i < headerLine.length; i++) {
    const ch = headerLine.charCodeAt(i);
    if (ch === QUOTE) quoted = !quoted;
    else if (!quoted) {
      if (ch === 44) counts[0]++;
      else if (ch === 9) counts[1]++;
      else if (ch === 59) counts[2]++;
      else if (ch === 124) counts[3]++;
    }
  }
  let best = 0;
  for (let k = 1; k < counts.length; k++) if (counts[k] > counts[best]) best = k;
  return DELIMITER_CANDIDATES[best];
}

function newlinesInFields(row: string[]): number {
  let total = 0;
  for (let c = 0; c < row.length; c++) {
    const field = row[c];
    for (let i = field.indexOf('\n'); i !== -1; i = field.indexOf('\n', i + 1)) total++;
  }
  return total;
}

function countNewlines(s: string, from: number, to: number): number {
  let total = 0;
  for (let i = s.indexOf('\n', from); i !== -1 && i < to; i = s.indexOf('\n', i + 1)) total++;
  return total;
}

/** Offset just past the `count`-th newline from `pos`, or the end of the text. */
function skipNewlines(s: string, pos: number, count: number): number {
  for (let j = 0; j < count; j++) {
    const nl = s.indexOf('\n', pos);
    if (nl === -1) return s.length;
    pos = nl + 1;
  }
  return pos;
}
