/**
 * The text `starsieve columns FILE` prints: what each column was bound to, in which unit, on whose
 * word, and why; then what was left unbound and the notes. Plain text so it reads the same in a
 * terminal, a CI log and a pasted issue.
 */
import type { ColumnMeta } from '../readers/types.js';
import type { Binding, ColumnBinding, ErrorBinding } from './types.js';

/** Unbound names listed before the rest is only counted; past this a list stops being read. */
const UNBOUND_SHOWN = 60;
const LINE_WIDTH = 100;

function errorLabel(e: ErrorBinding): string {
  const side = e.role === 'sym' ? 'uncertainty' : e.role === 'lo' ? 'lower uncertainty' : 'upper uncertainty';
  return e.negativeStored ? `${side}, stored negative` : side;
}

function sourceOf(b: ColumnBinding): string {
  return b.unit === '' && b.unitSource === 'none' ? b.quantitySource : `${b.quantitySource} / ${b.unitSource}`;
}

/** The reason without its leading "`column`: ", which the table already shows. */
function why(b: ColumnBinding): string {
  const lead = `\`${b.column}\`: `;
  return b.reason.startsWith(lead) ? b.reason.slice(lead.length) : b.reason;
}

function wrap(prefix: string, items: readonly string[], width: number): string[] {
  const lines: string[] = [];
  const indent = ' '.repeat(prefix.length);
  let line = prefix;
  for (let i = 0; i < items.length; i++) {
    const item = items[i] + (i < items.length - 1 ? ',' : '');
    const fresh = line === prefix || line === indent;
    if (!fresh && line.length + 1 + item.length > width) {
      lines.push(line);
      line = indent;
    }
    line += (line === prefix || line === indent ? '' : ' ') + item;
  }
  lines.push(line);
  return lines;
}

export function explainBinding(binding: Binding, meta: ColumnMeta[]): string {
  const out: string[] = [];
  const rows: string[][] = [];
  for (const b of binding.columns) {
    rows.push([b.quantity, b.column, b.unit === '' ? '-' : b.unit, sourceOf(b), why(b)]);
    for (const e of b.errors) rows.push(['', `  ${e.column}`, e.unit === '' ? '-' : e.unit, '', errorLabel(e)]);
  }

  if (rows.length === 0) {
    out.push('No column was bound to a quantity.');
  } else {
    const head = ['quantity', 'column', 'unit', 'from', 'why'];
    const widths = head.slice(0, 4).map((h, k) => Math.max(h.length, ...rows.map((r) => r[k].length)));
    const line = (r: string[]) =>
      ('  ' + r.slice(0, 4).map((cell, k) => cell.padEnd(widths[k])).join('  ') + '  ' + r[4]).trimEnd();
    out.push(line(head));
    for (const r of rows) out.push(line(r));
  }

  const used = new Set<number>();
  for (const b of binding.columns) {
    used.add(b.columnIndex);
    for (const e of b.errors) used.add(e.columnIndex);
  }
  const unbound = meta.map((m, i) => ({ name: m.name, i })).filter(({ i }) => !used.has(i)).map(({ name }) => name);
  if (unbound.length > 0) {
    out.push('');
    const shown = unbound.slice(0, UNBOUND_SHOWN);
    const items = unbound.length > shown.length ? [...shown, `... and ${unbound.length - shown.length} more`] : shown;
    out.push(...wrap(`Not bound (${unbound.length}): `, items, LINE_WIDTH));
  }

  if (binding.notes.length > 0) {
    out.push('', 'Notes:');
    for (const n of binding.notes) out.push(`  - ${n}`);
  }
  return out.join('\n');
}
