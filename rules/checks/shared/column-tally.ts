/**
 * Counts per catalog column, for the rules that speak once per column rather than once per row
 * (missing-value codes, numbers read leniently, zero uncertainties). Memory is one small record per
 * column and label, whatever the row count.
 */
import { columnFinding } from '../../engine/findings.js';
import type { Finding, Severity } from '../../engine/types.js';

export interface ColumnCount {
  column: string;
  total: number;
  /** First data row (1-based) and physical line where the column met it. */
  firstRow: number;
  firstLine: number | null;
  /** The first cell's text, where the rule gave one. */
  example: string | null;
  /** Count per label (a code, a form), in first-seen order. */
  labels: Map<string, number>;
}

export class ColumnTally {
  private readonly byColumn = new Map<string, ColumnCount>();

  add(column: string, label: string, row: number, line: number | null, example: string | null = null): void {
    let c = this.byColumn.get(column);
    if (!c) {
      c = { column, total: 0, firstRow: row, firstLine: line, example, labels: new Map() };
      this.byColumn.set(column, c);
    }
    c.total++;
    c.labels.set(label, (c.labels.get(label) ?? 0) + 1);
  }

  get size(): number {
    return this.byColumn.size;
  }

  columns(): IterableIterator<ColumnCount> {
    return this.byColumn.values();
  }

  /** Total over all columns and labels. */
  total(): number {
    let n = 0;
    for (const c of this.byColumn.values()) n += c.total;
    return n;
  }

  /** One column finding per column, with the counts in `values` and the message `text` gives. */
  notes(rule: string, severity: Severity, input: number, text: (c: ColumnCount) => string): Finding[] {
    const out: Finding[] = [];
    for (const c of this.byColumn.values()) {
      const values: Record<string, number | string | null> = { cells: c.total, firstRow: c.firstRow };
      for (const [label, n] of c.labels) values[label] = n;
      out.push(columnFinding({ input, rule, severity, columns: [c.column], values, message: text(c) }));
    }
    return out;
  }
}

/** "`-999` 10 times, `...` twice": the labels of a count, most frequent first, at most `max`. */
export function describeLabels(labels: ReadonlyMap<string, number>, max = 4): string {
  const sorted = [...labels].sort((a, b) => b[1] - a[1]);
  const parts = sorted.slice(0, max).map(([label, n]) => `\`${label}\` ${n === 1 ? 'once' : n === 2 ? 'twice' : `${n} times`}`);
  if (sorted.length > max) parts.push(`${sorted.length - max} more`);
  return parts.join(', ');
}
