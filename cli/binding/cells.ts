/**
 * Text cells to numbers, the way catalogs write them. Kept apart from the binder so the hot loop
 * is small: Number() does the work, and only the rare cell it rejects takes the slow path.
 */
import type { RawColumn } from '../readers/types.js';
import type { InputProblem } from '../../rules/engine/types.js';

/** Markers that mean "no value" in real tables; they are missing, not unparseable. */
const MISSING = new Set(['', 'nan', 'null', 'none', '--']);

const MAX_MISSING_LENGTH = Math.max(...[...MISSING].map((m) => m.length));

export function isMissingText(s: string): boolean {
  return MISSING.has(s.trim().toLowerCase());
}

function special(s: string): number {
  const t = s.trim().toLowerCase();
  if (t === 'inf' || t === '+inf' || t === 'infinity' || t === '+infinity') return Infinity;
  if (t === '-inf' || t === '-infinity') return -Infinity;
  return NaN;
}

/**
 * A decimal number, exponent, leading `+`, `inf`/`Infinity`; NaN for anything else (the caller
 * tells missing from unparseable with isMissingText). Number() alone would read `0x1A`, `0b1`
 * and blanks as numbers, which no catalog means.
 */
export function parseCell(s: string): number {
  if (s.length === 0) return NaN;
  const c0 = s.charCodeAt(0);
  if (c0 <= 32) {
    const t = s.trim();
    // trim() keeps NUL and the other C0 controls: a cell starting with one is no number (and must not recurse forever).
    return t.length === 0 || t.length === s.length ? NaN : parseCell(t);
  }
  const n = +s;
  if (n === n) {
    if (c0 === 48 && s.length > 2) {
      const c1 = s.charCodeAt(1) | 32;
      if (c1 === 120 || c1 === 98 || c1 === 111) return NaN; // 0x, 0b, 0o
    }
    return n;
  }
  return special(s);
}

/** Runs of two or more dots (`..`, `...`, `.....`) or an ellipsis: a missing-value code, not a number. */
const DOTS = /^\s*(?:\.{2,}|\u2026)\s*$/;
/** A Fortran double-precision exponent: `1.0D+26`, `-3.2d-4`. */
const FORTRAN = /^\s*[+-]?(?:\d+\.?\d*|\.\d+)[dD][+-]?\d+\s*$/;
/**
 * Thousands separators: groups of exactly three digits after a first group of 1-3 with no leading zero.
 * No exponent: `3,828e26` is a decimal comma (3.828e26), never 3828e26.
 */
const THOUSANDS = /^\s*[+-]?[1-9]\d{0,2}(?:,\d{3})+(?:\.\d*)?\s*$/;
/** A decimal comma: digits, one comma, digits, and not a thousands grouping (`1,23`, `0,5`). */
const DECIMAL_COMMA = /^\s*[+-]?\d+,\d+(?:[eE][+-]?\d+)?\s*$/;

/**
 * The two forms of a cell Number() rejects that are still unambiguous numbers. Thousands
 * separators are read only where nothing in the column batch uses a decimal comma (see readNumbers).
 */
function lenientValue(s: string): { value: number; form: 'thousands' | 'fortran' } | null {
  if (FORTRAN.test(s)) return { value: Number(s.trim().replace(/[dD]/, 'e')), form: 'fortran' };
  if (THOUSANDS.test(s)) return { value: Number(s.trim().replace(/,/g, '')), form: 'thousands' };
  return null;
}

/**
 * Read a raw column into `out` as the numbers written. Cells that are neither numbers nor missing
 * markers take the slow path, once per cell, and each gives one InputProblem when `problems` is
 * given:
 * - runs of dots (`...`) are a missing-value code: NaN, kind `sentinel` (the sentinel-value rule
 *   counts them per column);
 * - Fortran exponents (`1.0D+26`) and thousands separators (`51,230`) are read, kind `lenient`
 *   (one note per column from unparseable-value);
 * - anything else is NaN, kind `unparseable`.
 * A comma is ambiguous: `1,234` is 1234 with a thousands separator or 1.234 with a decimal comma.
 * It is read as thousands only where the column has no comma that cannot be one (`1,23`, `0,5`);
 * such a column writes decimal commas, and all of its comma cells stay unparseable rather than
 * being guessed. The check command decides this once per column from the binder's sample (the
 * first 16384 rows, `decimalComma`), so the reading does not depend on the batch size; without
 * that decision it is made per batch.
 */
/**
 * Whether a cell is evidence that its column writes decimal commas (`1,5`, `0,25`: a comma that
 * cannot be a thousands separator).
 */
export function writesDecimalComma(s: string): boolean {
  return DECIMAL_COMMA.test(s) && !THOUSANDS.test(s);
}

/** Whether any cell of a raw text column writes a decimal comma. */
export function columnWritesDecimalComma(col: RawColumn | undefined): boolean {
  if (!col || col.kind !== 'text') return false;
  for (const s of col.values) if (s !== null && s.indexOf(',') !== -1 && writesDecimalComma(s)) return true;
  return false;
}

export function readNumbers(
  col: RawColumn,
  column: string,
  out: Float64Array,
  problems: InputProblem[] | null,
  /**
   * Whether the column writes decimal commas, when decided once for the whole input (from the
   * binder's sample); null decides it from this batch alone.
   */
  decimalComma: boolean | null = null,
): void {
  const n = out.length;
  if (col.kind === 'number' || col.kind === 'scanned') {
    const v = col.values;
    const m = Math.min(n, v.length);
    out.set(m === v.length ? v : v.subarray(0, m));
    for (let i = m; i < n; i++) out[i] = NaN;
    if (col.kind === 'scanned') {
      // Only the cells the scanner could not read take the slow path, the same one as text cells.
      const lenient = new LenientCells(column, out, problems, decimalComma);
      const idx = col.oddIndex;
      for (let k = 0; k < idx.length; k++) if (idx[k] < n) lenient.cell(idx[k], col.oddText[k]);
      lenient.end();
      return;
    }
    // The contract puts NaN under a typed null already; the mask is honoured in case a reader does not.
    const nulls = col.nulls;
    if (nulls !== null) for (let i = 0; i < m; i++) if (nulls[i] === 1) out[i] = NaN;
    return;
  }
  const cells = col.values;
  const lenient = new LenientCells(column, out, problems, decimalComma);
  for (let i = 0; i < n; i++) {
    const s = i < cells.length ? cells[i] : null;
    if (s === null) out[i] = NaN;
    else lenient.cell(i, s);
  }
  lenient.end();
}

/** The per-cell reading of text, in row order, with the column-wide decision about commas at the end. */
class LenientCells {
  /** Thousands-separated cells wait until the column is known not to use decimal commas. */
  private thousands: { i: number; s: string }[] | null = null;
  private decimalComma: boolean;

  constructor(
    private readonly column: string,
    private readonly out: Float64Array,
    private readonly problems: InputProblem[] | null,
    private readonly decided: boolean | null,
  ) {
    this.decimalComma = decided ?? false;
  }

  cell(i: number, s: string): void {
    const x = parseCell(s);
    this.out[i] = x;
    if (x === x || isMissingText(s)) return;
    const column = this.column;
    if (DOTS.test(s)) {
      this.problems?.push({ index: i, kind: 'sentinel', column, text: s, message: `${column}: \`${s.trim()}\` is a missing-value code, read as missing` });
      return;
    }
    const lenient = lenientValue(s);
    if (lenient && lenient.form === 'thousands') {
      (this.thousands ??= []).push({ i, s });
      return;
    }
    if (lenient) {
      this.out[i] = lenient.value;
      this.problems?.push({ index: i, kind: 'lenient', column, text: s, message: `${column}: \`${s.trim()}\` read as ${lenient.value} (Fortran D exponent)` });
      return;
    }
    if (this.decided === null && DECIMAL_COMMA.test(s)) this.decimalComma = true;
    this.problems?.push(unparseable(i, column, s));
  }

  /** The deferred thousands cells; they come last, and toBatch sorts the batch's problems by row. */
  end(): void {
    if (this.thousands === null) return;
    const column = this.column;
    for (const { i, s } of this.thousands) {
      if (this.decimalComma) {
        this.problems?.push(unparseable(i, column, s, ' (the column writes decimal commas elsewhere, so the comma is ambiguous)'));
        continue;
      }
      const v = Number(s.trim().replace(/,/g, ''));
      this.out[i] = v;
      this.problems?.push({ index: i, kind: 'lenient', column, text: s, message: `${column}: \`${s.trim()}\` read as ${v} (thousands separators)` });
    }
  }
}

function unparseable(index: number, column: string, s: string, why = ''): InputProblem {
  return { index, kind: 'unparseable', column, text: s, message: `${column}: \`${s}\` is not a number${why}` };
}

/** Text cells for id and stage: trimmed, with empty cells and missing markers as null. */
export function readText(col: RawColumn, n: number): (string | null)[] {
  const out: (string | null)[] = new Array(n);
  if (col.kind === 'scanned') {
    // Not meant for text (the reader keeps text columns as text); written back as best it can.
    for (let i = 0; i < n; i++) {
      const x = col.values[i];
      out[i] = x === x ? String(x) : null;
    }
    for (let k = 0; k < col.oddIndex.length; k++) {
      const i = col.oddIndex[k];
      if (i >= n) continue;
      const t = col.oddText[k].trim();
      out[i] = MISSING.has(t.toLowerCase()) ? null : t;
    }
    return out;
  }
  if (col.kind === 'number') {
    for (let i = 0; i < n; i++) {
      const x = col.values[i];
      out[i] = x === x && !(col.nulls !== null && col.nulls[i] === 1) ? String(x) : null;
    }
    return out;
  }
  const cells = col.values;
  for (let i = 0; i < n; i++) {
    const s = i < cells.length ? cells[i] : null;
    if (s === null) {
      out[i] = null;
      continue;
    }
    // Most cells have no surrounding space and are longer than any missing marker: taken as they are.
    const len = s.length;
    if (len > MAX_MISSING_LENGTH && s.charCodeAt(0) > 32 && s.charCodeAt(len - 1) > 32) {
      out[i] = s;
      continue;
    }
    const t = s.trim();
    out[i] = MISSING.has(t.toLowerCase()) ? null : t;
  }
  return out;
}
