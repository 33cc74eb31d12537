import { Chalk, type ChalkInstance } from 'chalk';
import type { RuleReport } from '../../rules/engine/runner.js';
import type { Finding, FindingSink, Severity } from '../../rules/engine/types.js';

export interface InputSummary {
  index: number;
  path: string;
  format: string;
  records: number;
  rows: number;
  unparseableRecords: number;
  rowsWithFindings: number;
  bound: { quantity: string; column: string; unit: string }[];
  notes: string[];
}

/**
 * Catalog text as it may be shown on a terminal: control characters (an escape sequence in an id
 * could recolour or rewrite the screen) are written as visible `\xNN` escapes.
 */
export function safe(text: string): string {
  return text.replace(/[\x00-\x08\x0b-\x1f\x7f-\x9f]/g, (ch) => `\\x${ch.charCodeAt(0).toString(16).padStart(2, '0')}`).replace(/[\t\n]/g, ' ');
}

/** Keeps the first few findings of each rule for the terminal; everything else is only counted. */
export class TerminalCollector implements FindingSink {
  readonly shown = new Map<string, Finding[]>();
  readonly counts = new Map<string, Record<Severity, number>>();
  constructor(private readonly perRule: number) {}
  push(f: Finding): void {
    let c = this.counts.get(f.rule);
    if (!c) this.counts.set(f.rule, (c = { error: 0, warning: 0, note: 0 }));
    c[f.severity]++;
    let list = this.shown.get(f.rule);
    if (!list) this.shown.set(f.rule, (list = []));
    if (list.length < this.perRule) list.push(f);
  }
}

function pad(s: string, n: number): string {
  return s.length >= n ? s : s + ' '.repeat(n - s.length);
}
function lpad(s: string, n: number): string {
  return s.length >= n ? s : ' '.repeat(n - s.length) + s;
}
const num = (n: number) => n.toLocaleString('en-US');

export interface TerminalOptions {
  color: boolean;
  failOn: Severity | 'never';
  failed: boolean;
}

/** The human summary: inputs, a table by rule, the first findings of each rule, the verdict. */
export function renderTerminal(
  inputs: InputSummary[],
  rules: { id: string; reports: RuleReport[] }[],
  collector: TerminalCollector,
  opts: TerminalOptions,
): string {
  const c: ChalkInstance = new Chalk({ level: opts.color ? 1 : 0 });
  const sev = (s: Severity, text: string) => (s === 'error' ? c.red(text) : s === 'warning' ? c.yellow(text) : c.cyan(text));
  const lines: string[] = [];
  for (const inp of inputs) {
    lines.push(
      c.bold(safe(inp.path)) +
        `  ${inp.format}, ${num(inp.rows)} rows` +
        (inp.unparseableRecords ? c.yellow(`, ${num(inp.unparseableRecords)} records not parseable`) : '') +
        `, ${num(inp.rowsWithFindings)} with findings`,
    );
    if (inp.bound.length) lines.push(c.dim('  bound: ' + safe(inp.bound.map((b) => `${b.quantity}=${b.column} [${b.unit || '-'}]`).join(', '))));
    for (const n of inp.notes) lines.push(c.dim('  note: ' + safe(n)));
  }
  lines.push('');
  const w = Math.max(24, ...rules.map((r) => r.id.length + 2));
  lines.push(c.bold(pad('rule', w) + lpad('checked', 10) + lpad('skipped', 10) + lpad('error', 8) + lpad('warning', 9) + lpad('note', 7)));
  for (const r of rules) {
    const checked = r.reports.reduce((a, x) => a + x.checked, 0);
    const skipped = r.reports.reduce((a, x) => a + Object.values(x.skipped).reduce((p, q) => p + q, 0), 0);
    const cnt = collector.counts.get(r.id) ?? { error: 0, warning: 0, note: 0 };
    const ran = r.reports.some((x) => x.status === 'ran');
    const cell = (s: Severity, width: number) => (cnt[s] ? sev(s, lpad(num(cnt[s]), width)) : c.dim(lpad('0', width)));
    lines.push(pad(r.id, w) + lpad(num(checked), 10) + lpad(num(skipped), 10) + cell('error', 8) + cell('warning', 9) + cell('note', 7) + (ran ? '' : c.dim('  not run: ' + (r.reports[0]?.reason ?? ''))));
    for (const rep of r.reports) {
      const d = rep.details as { expectedByChance?: number; observed?: number };
      if (typeof d.expectedByChance === 'number') {
        lines.push(c.dim(`${' '.repeat(2)}chance alone predicts ${d.expectedByChance.toFixed(1)} exceedances among the stars judged; ${d.observed} seen`));
      }
    }
  }
  for (const r of rules) {
    const shown = collector.shown.get(r.id);
    if (!shown?.length) continue;
    const cnt = collector.counts.get(r.id)!;
    const total = cnt.error + cnt.warning + cnt.note;
    lines.push('');
    lines.push(c.bold(r.id) + c.dim(`  (${total} finding${total === 1 ? '' : 's'})`));
    for (const f of shown) {
      const where =
        f.scope === 'column'
          ? `${safe(inputs[f.input]?.path ?? '')} column`
          : f.row === null
            ? `line ${f.line ?? '?'} (no row)`
            : `row ${f.row}` + (f.line !== null ? ` (line ${f.line})` : '') + (f.id ? ` ${safe(f.id)}` : '');
      lines.push(`  ${sev(f.severity, pad(f.severity, 7))} ${c.bold(where)}: ${safe(f.message)}`);
      if (f.suggestion) lines.push(c.dim(`          suggestion: ${safe(f.suggestion.text)}`));
    }
    if (total > shown.length) lines.push(c.dim(`  ... ${num(total - shown.length)} more in the report`));
  }
  const totals = { error: 0, warning: 0, note: 0 };
  for (const cnt of collector.counts.values()) for (const s of ['error', 'warning', 'note'] as const) totals[s] += cnt[s];
  lines.push('');
  const verdict = opts.failed ? c.red.bold('FAIL') : c.green.bold('PASS');
  const level = opts.failOn === 'never' ? 'never fails on findings' : `fails on ${opts.failOn} and above`;
  lines.push(`${verdict}  ${sev('error', `${num(totals.error)} error`)}, ${sev('warning', `${num(totals.warning)} warning`)}, ${sev('note', `${num(totals.note)} note`)} (${level})`);
  return lines.join('\n') + '\n';
}
