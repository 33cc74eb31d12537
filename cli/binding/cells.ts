/**
 * Text cells to numbers, the way catalogs write them. Kept apart from the binder so the hot loop
 * is small: Number() does the work, and only the rare cell it rejects takes the slow path.
 */
import type { RawColumn } from '../readers/types.js';
import type { InputProblem } from '../../rules/engine/types.js';

/** Markers that mean "no value" in real tables; they are missing, not unparseable. */
const MISSING = new Set(['', 'nan', 'null', 'none', '--']);

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
    return t.length === 0 ? NaN : parseCell(t);
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

/**
 * Read a raw column into `out` as the numbers written. Cells that are neither numbers nor missing
 * markers become NaN and, when `problems` is given, one InputProblem each.
 */
export function readNumbers(col: RawColumn, column: string, out: Float64Array, problems: InputProblem[] | null): void {
  const n = out.length;
  if (col.kind === 'number') {
    const v = col.values;
    const m = Math.min(n, v.length);
    out.set(m === v.length ? v : v.subarray(0, m));
    for (let i = m; i < n; i++) out[i] = NaN;
    // The contract puts NaN under a typed null already; the mask is honoured in case a reader does not.
    const nulls = col.nulls;
    if (nulls !== null) for (let i = 0; i < m; i++) if (nulls[i] === 1) out[i] = NaN;
    return;
  }
  const cells = col.values;
  for (let i = 0; i < n; i++) {
    const s = i < cells.length ? cells[i] : null;
    if (s === null) {
      out[i] = NaN;
      continue;
    }
    const x = parseCell(s);
    out[i] = x;
    if (x !== x && problems !== null && !isMissingText(s)) {
      problems.push({
        index: i,
        kind: 'unparseable',
        column,
        text: s,
        message: `${column}: \`${s}\` is not a number`,
      });
    }
  }
}

/** Text cells for id and stage: trimmed, with empty cells and missing markers as null. */
export function readText(col: RawColumn, n: number): (string | null)[] {
  const out: (string | null)[] = new Array(n);
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
    const t = s.trim();
    out[i] = MISSING.has(t.toLowerCase()) ? null : t;
  }
  return out;
}
