/**
 * Counts per catalog column, for the rules that speak once per column rather than once per row
 * (missing-value codes, numbers read leniently, zero uncertainties). Memory is one small record per
 * column and label, whatever the row count.
 *
 * The notes do not depend on where batches start (see the order below), so an input checked in
 * row ranges gives the notes of one pass.
 */
import { columnFinding } from '../../engine/findings.js';
import type { Finding, RowShift, Severity } from '../../engine/types.js';

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

/** Where a column or label was first met: its row, and the count's sequence number there (for cells of one row). */
interface FirstAt {
  row: number;
  seq: number;
}

interface Count extends ColumnCount {
  first: FirstAt;
  /** The lowest rank the rule gave the column's cells, Infinity for none. */
  rank: number;
  /** Per label: where it was first met, and whether it came from a ranked count. */
  labelFirst: Map<string, FirstAt & { ranked: boolean }>;
}

/** A tally as data, for an input checked in row ranges: its columns in order, their labels in order. */
export type ColumnTallyState = {
  column: string;
  total: number;
  firstRow: number;
  firstLine: number | null;
  example: string | null;
  /** Null for none (a rank of Infinity does not survive every serializer). */
  rank: number | null;
  /** Label, count, first row, whether ranked. */
  labels: [string, number, number, boolean][];
}[];

const byFirst = (a: FirstAt, b: FirstAt) => a.row - b.row || a.seq - b.seq;
const byColumnKey = (a: Count, b: Count) => (a.rank === b.rank ? 0 : a.rank < b.rank ? -1 : 1) || byFirst(a.first, b.first);

/**
 * The order of the notes is that of a pass with the whole input in one batch, whatever the batches
 * were: a rule that counts column by column within a batch gives each count the `rank` of its
 * column's loop, and ranked columns come first by rank, then by first row; counts without a rank
 * (the reader's problems, met in row order) follow by first row. Cells of one row are ordered by
 * when they were counted, which is the same however the rows are cut into batches.
 */
export class ColumnTally {
  private readonly byColumn = new Map<string, Count>();
  private seq = 0;

  /** One cell; `rank` is the position of the rule's loop over this column within a batch, if it loops column by column. */
  add(column: string, label: string, row: number, line: number | null, example: string | null = null, rank: number | null = null): void {
    const seq = this.seq++;
    let c = this.byColumn.get(column);
    if (!c) {
      c = { column, total: 0, firstRow: row, firstLine: line, example, labels: new Map(), first: { row, seq }, rank: Infinity, labelFirst: new Map() };
      this.byColumn.set(column, c);
    } else if (row < c.firstRow) {
      // A cell counted later in the batch by another loop (a `...` after the numeric codes) but on an earlier row.
      c.firstRow = row;
      c.firstLine = line;
      c.example = example;
      c.first = { row, seq };
    }
    if (rank !== null && rank < c.rank) c.rank = rank;
    c.total++;
    const n = c.labels.get(label);
    if (n === undefined) {
      c.labels.set(label, 1);
      c.labelFirst.set(label, { row, seq, ranked: rank !== null });
    } else {
      c.labels.set(label, n + 1);
      const f = c.labelFirst.get(label)!;
      if (row < f.row) c.labelFirst.set(label, { row, seq, ranked: f.ranked || rank !== null });
    }
  }

  get size(): number {
    return this.byColumn.size;
  }

  /** The columns in order (see the class), each with its labels in order. */
  columns(): ColumnCount[] {
    return this.inOrder();
  }

  private inOrder(): Count[] {
    const out = [...this.byColumn.values()].sort(byColumnKey);
    for (const c of out) {
      if (c.labels.size < 2) continue;
      const key = (l: string) => c.labelFirst.get(l)!;
      // Within a batch the ranked loop meets a column's labels before the reader's problems do.
      const order = [...c.labels.keys()].sort((a, b) => Number(key(b).ranked) - Number(key(a).ranked) || byFirst(key(a), key(b)));
      c.labels = new Map(order.map((l) => [l, c.labels.get(l)!]));
    }
    return out;
  }

  /** Total over all columns and labels. */
  total(): number {
    let n = 0;
    for (const c of this.byColumn.values()) n += c.total;
    return n;
  }

  save(): ColumnTallyState {
    return this.inOrder().map((c) => ({
      column: c.column,
      total: c.total,
      firstRow: c.firstRow,
      firstLine: c.firstLine,
      example: c.example,
      rank: c.rank === Infinity ? null : c.rank,
      labels: [...c.labels].map(([label, n]): [string, number, number, boolean] => {
        const f = c.labelFirst.get(label)!;
        return [label, n, f.row, f.ranked];
      }),
    }));
  }

  /**
   * Adds the tally of the rows that follow those counted here (numbered from 1; `shift` turns them
   * into rows of the whole input): counts add up, a column or label met here first keeps its first
   * row and example, and the new ones come after, in their order.
   */
  absorb(state: ColumnTallyState, shift: RowShift): void {
    for (const t of state) {
      let c = this.byColumn.get(t.column);
      if (!c) {
        const line = t.firstLine === null ? null : t.firstLine + shift.lines;
        c = { column: t.column, total: 0, firstRow: t.firstRow + shift.rows, firstLine: line, example: t.example, labels: new Map(), first: { row: t.firstRow + shift.rows, seq: this.seq++ }, rank: Infinity, labelFirst: new Map() };
        this.byColumn.set(t.column, c);
      }
      if (t.rank !== null && t.rank < c.rank) c.rank = t.rank;
      c.total += t.total;
      for (const [label, n, first, ranked] of t.labels) {
        const had = c.labels.get(label);
        c.labels.set(label, (had ?? 0) + n);
        if (had === undefined) c.labelFirst.set(label, { row: first + shift.rows, seq: this.seq++, ranked });
        else if (ranked) c.labelFirst.get(label)!.ranked = true;
      }
    }
  }

/** One column finding per column, with the counts in `values` and the message `text` gives. */
  notes(rule: string, severity: Severity, input: number, text: (c: ColumnCount) => string): Finding[] {
    const out: Finding[] = [];
    for (const c of this.columns()) {
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
