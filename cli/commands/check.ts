import { SEVERITIES, severityRank, type Finding, type FindingSink, type Severity } from '../../rules/engine/types.js';
import { selectRules } from '../../rules/engine/runner.js';
import { ALL_RULES } from '../../rules/checks/index.js';
import { bindOptionsFrom, selectionFrom, type FailLevel, type SelectionFlags } from '../options.js';
import { JsonReportWriter } from '../reports/json-report.js';
import { TerminalCollector, renderTerminal } from '../reports/terminal.js';
import { TOOL } from '../version.js';
import { runInputs } from './run-inputs.js';

export interface CheckFlags extends SelectionFlags {
  report?: string;
  failOn: FailLevel;
  bind: string[];
  unit: string[];
  format?: string;
  delimiter?: string;
  batchSize?: string;
  show: string;
  color: boolean;
  quiet?: boolean;
}

class Tee implements FindingSink {
  readonly totals: Record<Severity, number> = { error: 0, warning: 0, note: 0 };
  constructor(private readonly sinks: FindingSink[]) {}
  push(f: Finding): void {
    this.totals[f.severity]++;
    for (const s of this.sinks) s.push(f);
  }
}

/** `starsieve check`: lint the inputs, write the report, return the exit code (0 pass, 1 fail). */
export async function checkCommand(paths: string[], flags: CheckFlags): Promise<number> {
  const selection = selectionFrom(flags);
  const rules = selectRules(ALL_RULES, selection);
  const bind = bindOptionsFrom(flags.bind, flags.unit);
  const collector = new TerminalCollector(Math.max(0, Number(flags.show) || 0));
  const writer = flags.report ? new JsonReportWriter(flags.report, TOOL) : null;
  const tee = new Tee(writer ? [collector, writer] : [collector]);
  const isTty = process.stderr.isTTY === true;
  let lastProgress = 0;
  const progress = (path: string, rows: number) => {
    const now = Date.now();
    if (!isTty || now - lastProgress < 500) return;
    lastProgress = now;
    process.stderr.write(`\r\x1b[Kstarsieve: ${path}: ${rows.toLocaleString('en-US')} rows`);
  };
  const onSignal = (sig: NodeJS.Signals) => {
    writer?.abort();
    process.stderr.write(`\nstarsieve: interrupted by ${sig}; no report written, any earlier report is left as it was\n`);
    process.exit(130);
  };
  process.once('SIGINT', onSignal);
  process.once('SIGTERM', onSignal);
  try {
    const results = await runInputs({
      paths,
      rules,
      selection,
      bind,
      format: flags.format,
      delimiter: flags.delimiter,
      batchSize: flags.batchSize ? Number(flags.batchSize) : undefined,
      sink: tee,
      progress,
    });
    if (isTty && lastProgress) process.stderr.write('\r\x1b[K');
    const failed = flags.failOn !== 'never' && SEVERITIES.some((s) => tee.totals[s] > 0 && severityRank(s) >= severityRank(flags.failOn as Severity));
    const ruleRows = rules.map((r) => ({ id: r.meta.id, reports: results.map((x) => x.rules.find((y) => y.id === r.meta.id)!) }));
    writer?.commit({
      inputs: results.map((r) => r.summary),
      bindings: results.map((r, i) => ({ input: i, columns: r.binding.columns, notes: r.binding.notes })),
      rules: rules.map((r) => ({
        id: r.meta.id,
        title: r.meta.title,
        severity: r.meta.severity,
        perInput: results.map((x, i) => ({ input: i, ...x.rules.find((y) => y.id === r.meta.id)! })),
      })),
      summary: {
        findings: tee.totals,
        byRule: Object.fromEntries(rules.map((r) => [r.meta.id, collector.counts.get(r.meta.id) ?? { error: 0, warning: 0, note: 0 }])),
        rows: results.reduce((a, r) => a + r.summary.rows, 0),
        rowsWithFindings: results.reduce((a, r) => a + r.summary.rowsWithFindings, 0),
        failOn: flags.failOn,
        failed,
      },
    });
    if (!flags.quiet) {
      process.stdout.write(
        renderTerminal(results.map((r) => r.summary), ruleRows, collector, { color: flags.color, failOn: flags.failOn, failed }),
      );
      if (flags.report) process.stdout.write(`report written to ${flags.report}\n`);
    }
    return failed ? 1 : 0;
  } catch (e) {
    writer?.abort();
    throw e;
  } finally {
    process.removeListener('SIGINT', onSignal);
    process.removeListener('SIGTERM', onSignal);
  }
}
