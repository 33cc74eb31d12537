import { existsSync, writeFileSync } from 'node:fs';
import { ACCEPTED_FORMAT, readAccepted, type AcceptedEntry, type AcceptedFile } from '../reports/accepted.js';
import { readReport } from './report-file.js';

export interface AcceptFlags {
  out: string;
  reason?: string;
  by?: string;
  rules?: string;
}

/**
 * `starsieve accept REPORT.json`: records the report's findings as reviewed and accepted, added to
 * the accepted-findings file (entries already there are kept, with their reasons).
 */
export function acceptCommand(reportPath: string, flags: AcceptFlags): number {
  const report = readReport(reportPath);
  const only = flags.rules?.split(',').map((s) => s.trim());
  const existing: AcceptedFile = existsSync(flags.out) ? readAccepted(flags.out) : { format: ACCEPTED_FORMAT, version: 1, entries: [] };
  const have = new Set(existing.entries.map((e) => e.fingerprint));
  const now = new Date().toISOString();
  let added = 0;
  for (const f of report.findings) {
    if (only && !only.includes(f.rule)) continue;
    if (have.has(f.fingerprint)) continue;
    have.add(f.fingerprint);
    const entry: AcceptedEntry = {
      fingerprint: f.fingerprint,
      rule: f.rule,
      input: report.inputs[f.input]?.path,
      id: f.id,
      row: f.row,
      message: f.message,
      reason: flags.reason ?? 'reviewed',
      acceptedBy: flags.by ?? process.env.USER ?? 'unknown',
      acceptedAt: now,
    };
    existing.entries.push(entry);
    added++;
  }
  writeFileSync(flags.out, JSON.stringify(existing, null, 2) + '\n');
  process.stdout.write(`${added} finding${added === 1 ? '' : 's'} accepted into ${flags.out} (${existing.entries.length} in all)\n`);
  return 0;
}
