import type { Batch, ExpectedValue, Finding, FindingSink, InputProblem, Severity, Suggestion } from './types.js';

export interface RowFindingParts {
  rule: string;
  severity: Severity;
  columns: string[];
  values: Record<string, number | string | null>;
  expected?: ExpectedValue | null;
  message: string;
  suggestion?: Suggestion | null;
}

/** A finding about row `index` of `batch`, with the row, line and star id filled in. */
export function rowFinding(batch: Batch, index: number, parts: RowFindingParts): Finding {
  return rowFindingAt(batch.input, batch.firstRow + index, batch.lines ? batch.lines[index] : null, batch.text.id?.values[index] ?? null, parts);
}

/** A finding about a row known by its number, for rules that judge rows after their batch has gone. */
export function rowFindingAt(input: number, row: number, line: number | null, id: string | null, parts: RowFindingParts): Finding {
  return finding(input, 'row', row, line, id === '' ? null : id, parts);
}

function finding(input: number, scope: Finding['scope'], row: number | null, line: number | null, id: string | null, parts: RowFindingParts): Finding {
  return {
    rule: parts.rule,
    severity: parts.severity,
    input,
    scope,
    row,
    line,
    id,
    columns: parts.columns,
    values: parts.values,
    expected: parts.expected ?? null,
    message: parts.message,
    suggestion: parts.suggestion ?? null,
    cause: null,
    related: [],
  };
}

export interface ColumnFindingParts extends RowFindingParts {
  input: number;
}

/**
 * Fewer judged rows than this never make a column-level verdict (a whole column in another unit,
 * a constant offset): a short table gets its rows listed instead.
 */
export const COLUMN_VERDICT_MIN_ROWS = 10;

/** A finding that speaks for a whole column rather than one row. */
export function columnFinding(parts: ColumnFindingParts): Finding {
  return finding(parts.input, 'column', null, null, null, parts);
}

/**
 * A number for a message: up to 4 significant digits, exponent form outside 1e-3..1e6 so a watts
 * value reads as 3.828e+26 rather than a row of zeros.
 */
export function fmt(x: number, digits = 4): string {
  if (!Number.isFinite(x)) return String(x);
  const a = Math.abs(x);
  if (a !== 0 && (a >= 1e6 || a < 1e-3)) return x.toExponential(digits - 1).replace(/\.?0+e/, 'e');
  return String(Number(x.toPrecision(digits)));
}

/** Round for the machine-readable report: keeps 6 significant digits, enough to act on. */
export function round6(x: number): number | null {
  return Number.isFinite(x) ? Number(x.toPrecision(6)) : null;
}

/** One finding per reader or binder problem of `kind` in the batch, each at its own row. */
export function problemFindings(batch: Batch, kind: InputProblem['kind'], rule: string, severity: Severity, out: FindingSink): void {
  for (const p of batch.problems) {
    if (p.kind !== kind) continue;
    if (p.index < 0) {
      // A record that made no row (a quote never closed, a record past the size cap): at its line.
      out.push({ rule, severity, input: batch.input, scope: 'row', row: null, line: p.line ?? null, id: null, columns: [], values: {}, expected: null, message: p.message, suggestion: null, cause: null, related: [] });
      continue;
    }
    out.push(
      rowFinding(batch, p.index, {
        rule,
        severity,
        columns: p.column ? [p.column] : [],
        values: p.column ? { [p.column]: p.text } : {},
        message: p.message,
      }),
    );
  }
}
