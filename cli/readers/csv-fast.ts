/**
 * The fast path of the delimited-text reader: once the binder has said which columns the rules
 * read, lines without quotes are split with indexOf and numeric cells are read straight from the
 * text into Float64Array columns, with no string made per cell. Columns no rule reads are not
 * looked at; identifier-like columns still get their strings.
 *
 * The results must equal the papaparse path's exactly, so the number reader is deliberately
 * narrow: it accepts plain decimals (sign, digits, point, exponent) and computes them exactly when
 * at most 15 significant digits and a power of ten up to 22 are involved (both are then exact
 * doubles and one correctly rounded multiply or divide gives the same double as Number()).
 * Anything else, spaces and `inf` and `1,23` included, is kept as text for the binder's lenient
 * reading, cell by cell, exactly as on the slow path.
 */
import type { MalformedRecord, RawBatch, RawColumn, ReaderStats } from './types.js';
import { skippedColumn } from './projection.js';

const POW10 = [1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22];
const HASH = 35;

/**
 * The number `s[start, end)` spells when it is a plain decimal; NaN otherwise (the grammar never
 * yields NaN for a number, so NaN on a non-empty cell means "not plain, read it as text").
 */
export function scanNumber(s: string, start: number, end: number): number {
  let i = start;
  if (i >= end) return NaN;
  let c = s.charCodeAt(i);
  let neg = false;
  if (c === 45 || c === 43) {
    neg = c === 45;
    if (++i === end) return NaN;
    c = s.charCodeAt(i);
  }
  let m = 0;
  let sig = 0;
  let scale = 0;
  let digits = false;
  let long = false;
  while (c >= 48 && c <= 57) {
    digits = true;
    const d = c - 48;
    if (m !== 0 || d !== 0) {
      if (sig < 15) {
        m = m * 10 + d;
        sig++;
      } else long = true;
    }
    if (++i === end) break;
    c = s.charCodeAt(i);
  }
  if (i < end && c === 46) {
    i++;
    c = i < end ? s.charCodeAt(i) : 0;
    while (i < end && c >= 48 && c <= 57) {
      digits = true;
      const d = c - 48;
      if (m === 0 && d === 0) scale--;
      else if (sig < 15) {
        m = m * 10 + d;
        sig++;
        scale--;
      } else long = true;
      if (++i === end) break;
      c = s.charCodeAt(i);
    }
  }
  if (!digits) return NaN;
  let e = 0;
  if (i < end) {
    if (c !== 101 && c !== 69) return NaN;
    if (++i === end) return NaN;
    c = s.charCodeAt(i);
    let eneg = false;
    if (c === 45 || c === 43) {
      eneg = c === 45;
      if (++i === end) return NaN;
      c = s.charCodeAt(i);
    }
    let expDigits = false;
    while (c >= 48 && c <= 57) {
      expDigits = true;
      if (e < 100000) e = e * 10 + (c - 48);
      if (++i === end) break;
      c = s.charCodeAt(i);
    }
    if (!expDigits || i !== end) return NaN;
    if (eneg) e = -e;
  }
  if (long) return +s.slice(start, end);
  if (m === 0) return neg ? -0 : 0;
  const k = scale + e;
  let v: number;
  if (k >= 0 && k <= 22) v = m * POW10[k];
  else if (k < 0 && k >= -22) v = m / POW10[-k];
  else return +s.slice(start, end);
  return neg ? -v : v;
}

/** How the reader treats each column once the binding is known. */
export const enum CellMode {
  /** No rule reads it: not parsed at all. */
  Skip = 0,
  /** Read as a number, straight from the text. */
  Number = 1,
  /** Kept as a string (identifiers, stages). */
  Text = 2,
}

/** One numeric column of a batch being built: values, and the cells that were not plain numbers. */
class ScanColumn {
  values: Float64Array;
  oddIndex: number[] = [];
  oddText: string[] = [];
  constructor(size: number) {
    this.values = new Float64Array(size);
  }
  /** A cell that arrived as a string (the papaparse path, or rows read before the switch). */
  putText(index: number, s: string | null): void {
    if (s === null || s.length === 0) {
      this.values[index] = NaN;
      return;
    }
    const x = scanNumber(s, 0, s.length);
    this.values[index] = x;
    if (x !== x) {
      this.oddIndex.push(index);
      this.oddText.push(s);
    }
  }
}

/**
 * The batch under construction, for both paths: papaparse rows arrive as string arrays, scanned
 * lines cell by cell. Until `setModes` every column is kept as text (the first batch is what the
 * binder looks at); afterwards each column follows its mode.
 */
export class BatchBuilder {
  private modes: Uint8Array | null = null;
  private text: (string | null)[][] = [];
  private scan: (ScanColumn | null)[] = [];
  private lines: Int32Array;
  n = 0;
  private malformed: MalformedRecord[] = [];

  constructor(
    private readonly ncols: number,
    private readonly size: number,
    private readonly stats: ReaderStats,
    private readonly ready: RawBatch[],
  ) {
    this.lines = new Int32Array(size);
    this.reset();
  }

  get scanning(): boolean {
    return this.modes !== null;
  }

  /** Switches to per-column modes; rows already in the batch are converted so the batch is uniform. */
  setModes(modes: Uint8Array): void {
    const before = this.modes;
    const text = this.text;
    const scan = this.scan;
    this.modes = modes;
    this.reset(false);
    for (let c = 0; c < this.ncols; c++) {
      const was = before === null ? CellMode.Text : before[c];
      if (modes[c] === CellMode.Text) this.text[c] = was === CellMode.Text ? text[c] : new Array<string | null>(this.n).fill(null);
      else if (modes[c] === CellMode.Number) {
        if (was === CellMode.Number) this.scan[c] = scan[c];
        else if (was === CellMode.Text) for (let i = 0; i < this.n; i++) this.scan[c]!.putText(i, text[c][i]);
        else this.scan[c]!.values.fill(NaN, 0, this.n);
      }
    }
  }

  /** A record papaparse split into fields. */
  addFields(row: string[], line: number, badQuotes: boolean): void {
    const index = this.n;
    const width = row.length;
    const ncols = this.ncols;
    const modes = this.modes;
    const w = Math.min(width, ncols);
    if (modes === null) {
      for (let c = 0; c < w; c++) this.text[c].push(row[c]);
      for (let c = w; c < ncols; c++) this.text[c].push(null);
    } else {
      for (let c = 0; c < ncols; c++) {
        const m = modes[c];
        if (m === CellMode.Skip) continue;
        const s = c < w ? row[c] : null;
        if (m === CellMode.Number) this.scan[c]!.putText(index, s);
        else this.text[c].push(s);
      }
    }
    this.endRecord(width, line);
    if (badQuotes) {
      this.malformed.push({
        index,
        line,
        message: `line ${line}: a quoted field has text after its closing quote; the field was read up to the next closing quote`,
      });
    }
    this.endRow(line);
  }

  /**
   * Reads the lines of `buf[from, to)` on the fast path. `to` is the end of the text or just past
   * a newline; the text holds no quote. Returns the number of physical lines read.
   */
  scanLines(buf: string, from: number, to: number, firstLine: number, delimiter: string, comments: boolean, onBlank: (line: number) => void): number {
    const modes = this.modes!;
    const ncols = this.ncols;
    const dl = delimiter.length;
    let line = firstLine;
    let pos = from;
    while (pos < to) {
      let nl = buf.indexOf('\n', pos);
      if (nl === -1 || nl >= to) nl = to;
      if (comments && buf.charCodeAt(pos) === HASH) {
        pos = nl + 1;
        line++;
        continue;
      }
      const firstDelim = buf.indexOf(delimiter, pos);
      if (firstDelim === -1 || firstDelim >= nl) {
        if (nl === pos || (buf.charCodeAt(pos) <= 32 && buf.slice(pos, nl).trim() === '')) {
          onBlank(line);
          pos = nl + 1;
          line++;
          continue;
        }
      }
      const index = this.n;
      let c = 0;
      let s = pos;
      let e = firstDelim === -1 || firstDelim > nl ? nl : firstDelim;
      for (;;) {
        if (c < ncols) {
          const m = modes[c];
          if (m === CellMode.Number) {
            const col = this.scan[c]!;
            if (e === s) col.values[index] = NaN;
            else {
              const x = scanNumber(buf, s, e);
              col.values[index] = x;
              if (x !== x) {
                col.oddIndex.push(index);
                col.oddText.push(buf.slice(s, e));
              }
            }
          } else if (m === CellMode.Text) this.text[c].push(buf.slice(s, e));
        }
        c++;
        if (e >= nl) break;
        s = e + dl;
        e = buf.indexOf(delimiter, s);
        if (e === -1 || e > nl) e = nl;
      }
      for (let k = c; k < ncols; k++) {
        const m = modes[k];
        if (m === CellMode.Number) this.scan[k]!.values[index] = NaN;
        else if (m === CellMode.Text) this.text[k].push(null);
      }
      this.endRecord(c, line);
      this.endRow(line);
      pos = nl + 1;
      line++;
    }
    return line - firstLine;
  }

  /** The batch so far, handed on even when short (the end of the input). */
  flush(): void {
    if (this.n > 0 || this.malformed.length > 0) this.finish();
  }

  private endRecord(width: number, line: number): void {
    this.stats.records++;
    const ncols = this.ncols;
    if (width === ncols) return;
    const index = this.n;
    this.malformed.push({
      index,
      line,
      message:
        width < ncols
          ? `line ${line}: ${width} field${width === 1 ? '' : 's'}, header has ${ncols}; the missing ${ncols - width} are empty`
          : `line ${line}: ${width} fields, header has ${ncols}; the extra ${width - ncols} were dropped`,
    });
  }

  private endRow(line: number): void {
    this.lines[this.n] = line;
    this.n++;
    this.stats.rows++;
    if (this.n === this.size) this.finish();
  }

  /** A record that yields no row: counted, reported, and its place in the batch is -1. */
  broken(line: number, message: string): void {
    this.stats.records++;
    this.stats.unparseable++;
    this.malformed.push({ index: -1, line, message });
  }

  private finish(): void {
    const n = this.n;
    const columns: RawColumn[] = [];
    for (let c = 0; c < this.ncols; c++) {
      const m = this.modes === null ? CellMode.Text : this.modes[c];
      if (m === CellMode.Text) columns.push({ kind: 'text', values: this.text[c] });
      else if (m === CellMode.Number) {
        const col = this.scan[c]!;
        columns.push({ kind: 'scanned', values: col.values.subarray(0, n), oddIndex: col.oddIndex, oddText: col.oddText });
      } else columns.push(skippedColumn(n));
    }
    this.ready.push({ length: n, firstRow: this.stats.rows - n + 1, lines: this.lines.subarray(0, n), columns, malformed: this.malformed });
    this.lines = new Int32Array(this.size);
    this.reset();
  }

  /** Empty columns in the current modes; `rows` false keeps the rows and problems counted so far. */
  private reset(rows = true): void {
    if (rows) {
      this.n = 0;
      this.malformed = [];
    }
    this.text = [];
    this.scan = [];
    for (let c = 0; c < this.ncols; c++) {
      const m = this.modes === null ? CellMode.Text : this.modes[c];
      this.text.push(m === CellMode.Text ? [] : (null as unknown as (string | null)[]));
      this.scan.push(m === CellMode.Number ? new ScanColumn(this.size) : null);
    }
  }
}

/** True when `buf[from, to)` can take the fast path: no quote anywhere in it. */
export function scannable(buf: string): boolean {
  return buf.indexOf('"') === -1;
}
