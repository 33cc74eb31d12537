import { severityRank, type Severity } from '../../rules/engine/types.js';
import type { FailLevel } from '../options.js';
import { readReport, type StoredFinding } from './report-file.js';

export interface CompareFlags {
  failOn: FailLevel;
  json?: boolean;
  show: string;
}

interface RuleDelta {
  new: number;
  fixed: number;
  unchanged: number;
}

/**
 * `starsieve compare OLD NEW`: which findings are new in NEW, which were fixed since OLD, and
 * which stayed, matched by fingerprint (rule, input, star id or values; not the row number).
 * Exit 1 when a new finding is at or above the fail level.
 */
export function compareCommand(oldPath: string, newPath: string, flags: CompareFlags): number {
  const before = readReport(oldPath);
  const after = readReport(newPath);
  const oldSet = new Set(before.findings.map((f) => f.fingerprint));
  const newSet = new Set(after.findings.map((f) => f.fingerprint));
  const byRule = new Map<string, RuleDelta>();
  const delta = (rule: string) => {
    let d = byRule.get(rule);
    if (!d) byRule.set(rule, (d = { new: 0, fixed: 0, unchanged: 0 }));
    return d;
  };
  const added: StoredFinding[] = [];
  for (const f of after.findings) {
    if (oldSet.has(f.fingerprint)) delta(f.rule).unchanged++;
    else {
      delta(f.rule).new++;
      added.push(f);
    }
  }
  const fixed = before.findings.filter((f) => !newSet.has(f.fingerprint));
  for (const f of fixed) delta(f.rule).fixed++;
  const failing =
    flags.failOn === 'never' ? [] : added.filter((f) => !f.accepted && severityRank(f.severity) >= severityRank(flags.failOn as Severity));
  if (flags.json) {
    process.stdout.write(
      JSON.stringify({ old: oldPath, new: newPath, byRule: Object.fromEntries(byRule), newFindings: added, fixedFindings: fixed, failed: failing.length > 0 }, null, 2) + '\n',
    );
  } else {
    const lines = [`${oldPath} -> ${newPath}`, `${'rule'.padEnd(28)}${'new'.padStart(8)}${'fixed'.padStart(8)}${'unchanged'.padStart(11)}`];
    for (const [rule, d] of [...byRule].sort()) lines.push(`${rule.padEnd(28)}${String(d.new).padStart(8)}${String(d.fixed).padStart(8)}${String(d.unchanged).padStart(11)}`);
    const show = Math.max(0, Number(flags.show) || 0);
    if (added.length) lines.push('', 'new findings:');
    for (const f of added.slice(0, show)) lines.push(`  ${f.severity.padEnd(8)}${f.rule} row ${f.row ?? '-'}${f.id ? ` ${f.id}` : ''}: ${f.message}`);
    if (added.length > show) lines.push(`  ... ${added.length - show} more`);
    lines.push('', `${added.length} new, ${fixed.length} fixed, ${after.findings.length - added.length} unchanged${failing.length ? `; ${failing.length} new at or above ${flags.failOn}` : ''}`);
    process.stdout.write(lines.join('\n') + '\n');
  }
  return failing.length > 0 ? 1 : 0;
}
