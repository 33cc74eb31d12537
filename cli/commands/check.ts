import { SEVERITIES, severityRank, type Batch, type Finding, type FindingSink, type Severity } from '../../rules/engine/types.js';
import { selectRules } from '../../rules/engine/runner.js';
import { ALL_RULES } from '../../rules/checks/index.js';
import { readBindingFile, withCommandLine } from '../binding/binding-file.js';
import { bindOptionsFrom, selectionFrom, type FailLevel, type InputFlags, type SelectionFlags } from '../options.js';
import { AcceptedSet, readAccepted } from '../reports/accepted.js';
import { fingerprint, inputName } from '../reports/fingerprint.js';
import { writeHtml } from '../reports/html.js';
import { JsonReportWriter } from '../reports/json-report.js';
import { PlotData } from '../reports/plot-data.js';
import { SarifWriter } from '../reports/sarif.js';
import { TerminalCollector, renderTerminal } from '../reports/terminal.js';
import { TOOL } from '../version.js';
import { ConfigError } from '../../rules/engine/params.js';
import { defaultJobs, runInputs, type InputResult } from './run-inputs.js';
import { planByteShard, runByteShard, type ByteShardPlan, type ShardRange } from './byte-shard.js';

/** What the run cost: wall time, throughput and the peak memory of the process (all its threads). */
export function runCost(started: number, rows: number, jobs: number) {
  const wallSeconds = (Date.now() - started) / 1000;
  return {
    wallSeconds: Math.round(wallSeconds * 1000) / 1000,
    rowsPerSecond: Math.round(rows / Math.max(wallSeconds, 1e-3)),
    peakRssMb: Math.round(process.resourceUsage().maxRSS / 1024),
    jobs,
  };
}

/** `--shard K/N`: the K-th of N parts (1-based). */
export function shardFrom(value: string | undefined): { index: number; count: number } | null {
  if (value === undefined) return null;
  const m = /^\s*(\d+)\s*\/\s*(\d+)\s*$/.exec(value);
  const k = m ? Number(m[1]) : NaN;
  const n = m ? Number(m[2]) : NaN;
  if (!m || n < 1 || k < 1 || k > n) throw new ConfigError(`--shard needs K/N with 1 <= K <= N (the task id and the number of tasks), got "${value}"`);
  return { index: k, count: n };
}

/** The inputs shard K of N checks: every N-th, starting at the K-th, so the split needs no sizes and is the same everywhere. */
export function shardInputs(count: number, shard: { index: number; count: number } | null): number[] {
  const all = [...Array(count).keys()];
  return shard ? all.filter((i) => i % shard.count === shard.index - 1) : all;
}

/** `--jobs N`: a whole number of threads, at least 1; one per core by default. */
function jobsFrom(value: string | undefined): number {
  if (value === undefined) return defaultJobs();
  const n = Number(value);
  if (!Number.isInteger(n) || n < 1) throw new ConfigError(`--jobs needs a whole number of threads, 1 or more, got "${value}"`);
  return n;
}

export interface CheckFlags extends SelectionFlags, InputFlags {
  report?: string;
  sarif?: string;
  html?: string;
  htmlRows?: string;
  accepted?: string;
  failOn: FailLevel;
  batchSize?: string;
  jobs?: string;
  shard?: string;
  show: string;
  color: boolean;
  quiet?: boolean;
  print?: 'text' | 'json';
}

/**
 * Fans each finding out to the reports. Accepted findings are counted everywhere but are left
 * out of the totals that decide the exit code.
 */
class Dispatch implements FindingSink {
  readonly totals: Record<Severity, number> = { error: 0, warning: 0, note: 0 };
  readonly failing: Record<Severity, number> = { error: 0, warning: 0, note: 0 };
  constructor(
    private readonly names: string[],
    private readonly accepted: AcceptedSet,
    private readonly json: JsonReportWriter | null,
    private readonly sinks: FindingSink[],
  ) {}
  push(f: Finding): void {
    const fp = fingerprint(f, this.names[f.input] ?? String(f.input));
    const ok = this.accepted.match(fp);
    this.totals[f.severity]++;
    if (!ok) this.failing[f.severity]++;
    this.json?.push(f, fp, ok);
    for (const s of this.sinks) s.push(f);
  }
}

/** `starsieve check`: lint the inputs, write the reports, return the exit code (0 pass, 1 fail). */
export async function checkCommand(paths: string[], flags: CheckFlags): Promise<number> {
  const selection = selectionFrom(flags);
  const rules = selectRules(ALL_RULES, selection);
  const bind = withCommandLine(flags.binding ? readBindingFile(flags.binding) : null, bindOptionsFrom(flags.bind, flags.unit));
  const accepted = new AcceptedSet(flags.accepted ? readAccepted(flags.accepted) : null);
  const collector = new TerminalCollector(Math.max(0, Number(flags.show) || 0));
  const htmlRows = Math.max(1, Number(flags.htmlRows ?? 50) || 50);
  const htmlCollector = flags.html ? new TerminalCollector(htmlRows) : null;
  const plot = flags.html ? new PlotData() : null;
  const names = paths.map((p) => inputName(p));
  const writer = flags.report ? new JsonReportWriter(flags.report, TOOL) : null;
  const sarif = flags.sarif ? new SarifWriter(flags.sarif, TOOL, rules, paths) : null;
  const sinks: FindingSink[] = [collector];
  if (sarif) sinks.push(sarif);
  if (htmlCollector) sinks.push(htmlCollector);
  if (plot) sinks.push(plot);
  const dispatch = new Dispatch(names, accepted, writer, sinks);
  const abortAll = () => {
    writer?.abort();
    sarif?.abort();
  };
  const isTty = process.stderr.isTTY === true && !flags.quiet;
  let lastProgress = 0;
  const started = Date.now();
  let inputStarted = started;
  let currentPath = '';
  const progress = (path: string, rows: number, position: { done: number; total: number; unit: 'bytes' | 'rows' } | null) => {
    const now = Date.now();
    if (path !== currentPath) {
      currentPath = path;
      inputStarted = now;
    }
    if (!isTty || now - lastProgress < 500 || now - started < 1000) return;
    lastProgress = now;
    const secs = (now - inputStarted) / 1000;
    let tail = '';
    if (position && position.total > 0 && position.done > 0) {
      const f = Math.min(1, position.done / position.total);
      const left = secs * (1 / f - 1);
      tail = `, ${(100 * f).toFixed(0)}% of the ${position.unit === 'bytes' ? 'file' : 'table'}, about ${left < 90 ? `${Math.ceil(left)} s` : `${Math.ceil(left / 60)} min`} left`;
    }
    process.stderr.write(`\r\x1b[Kstarsieve: ${path}: ${rows.toLocaleString('en-US')} rows, ${Math.round(rows / Math.max(secs, 1e-3)).toLocaleString('en-US')} rows/s${tail}`);
  };

  const onSignal = (sig: NodeJS.Signals) => {
    abortAll();
    process.stderr.write(`\nstarsieve: interrupted by ${sig}; no report written, any earlier report is left as it was\n`);
    process.exit(130);
  };
  process.once('SIGINT', onSignal);
  process.once('SIGTERM', onSignal);
  const shard = shardFrom(flags.shard);
  const jobs = jobsFrom(flags.jobs);
  try {
    const readerFlags = {
      format: flags.format,
      delimiter: flags.delimiter,
      hdu: flags.hdu,
      table: flags.table,
      batchSize: flags.batchSize ? Number(flags.batchSize) : undefined,
    };
    // One file and several shards: each takes a byte range of it, where the file allows.
    let byteShard: ByteShardPlan | null = null;
    if (shard && shard.count > 1 && paths.length === 1) {
      if (!flags.report) throw new ConfigError('a shard of a single file needs --report: merge reads the shard reports and the state folders beside them');
      byteShard = await planByteShard(paths[0], { rules, selection, bind, ...readerFlags }, shard.index, shard.count);
    }
    const mine = byteShard ? [0] : shardInputs(paths.length, shard);
    const runOptions = {
      paths: mine.map((i) => paths[i]),
      inputs: mine,
      rules,
      selection,
      bind,
      ...readerFlags,
      jobs,
      sink: dispatch,
      progress,
      observe: plot ? (b: Batch) => plot.observe(b) : undefined,
    };
    const results: (InputResult & { range?: ShardRange })[] = byteShard ? [await runByteShard(runOptions, byteShard, flags.report!)] : await runInputs(runOptions);
    if (isTty && lastProgress) process.stderr.write('\r\x1b[K');
    const failed =
      flags.failOn !== 'never' && SEVERITIES.some((s) => dispatch.failing[s] > 0 && severityRank(s) >= severityRank(flags.failOn as Severity));
    const ruleRows = rules.map((r) => ({ id: r.meta.id, title: r.meta.title, severity: r.meta.severity, reports: results.map((x) => x.rules.find((y) => y.id === r.meta.id)!) }));
    const stale = accepted.stale();
    const createdAt = new Date().toISOString();
    const summary = {
      findings: dispatch.totals,
      byRule: Object.fromEntries(rules.map((r) => [r.meta.id, collector.counts.get(r.meta.id) ?? { error: 0, warning: 0, note: 0 }])),
      rows: results.reduce((a, r) => a + r.summary.rows, 0),
      rowsWithFindings: results.reduce((a, r) => a + r.summary.rowsWithFindings, 0),
      failOn: flags.failOn,
      failed,
      accepted: { matched: accepted.accepted, stale },
      cost: runCost(started, results.reduce((a, r) => a + r.summary.rows, 0), jobs),
    };
    writer?.commit({
      inputs: results.map((r) => r.summary),
      bindings: results.map((r) => ({ input: r.summary.index, columns: r.binding.columns, notes: r.binding.notes })),
      rules: ruleRows.map((r) => ({ id: r.id, title: r.title, severity: r.severity, perInput: r.reports.map((x, i) => ({ input: results[i].summary.index, ...x })) })),
      summary,
      shard: shard ? { ...shard, paths, ...(results[0]?.range ? { range: results[0].range } : {}) } : undefined,
    });
    sarif?.commit();
    if (flags.html && plot && htmlCollector) {
      plot.flush();
      writeHtml(flags.html, {
        tool: TOOL,
        createdAt,
        inputs: results.map((r) => r.summary),
        bindings: results.map((r) => r.binding),
        rules: ruleRows,
        counts: htmlCollector.counts,
        shown: htmlCollector.shown,
        plot,
        failOn: flags.failOn,
        failed,
      });
    }
    if (flags.print === 'json' && !flags.quiet) {
      const perRule = ruleRows.map((r) => ({ id: r.id, counts: collector.counts.get(r.id) ?? { error: 0, warning: 0, note: 0 }, first: collector.shown.get(r.id) ?? [], perInput: r.reports }));
      process.stdout.write(JSON.stringify({ inputs: results.map((r) => r.summary), rules: perRule, summary }, null, 2) + '\n');
    } else if (!flags.quiet) {
      process.stdout.write(
        renderTerminal(results.map((r) => r.summary), ruleRows, collector, { color: flags.color, failOn: flags.failOn, failed }),
      );
      if (flags.accepted) {
        process.stdout.write(`accepted: ${accepted.accepted} finding${accepted.accepted === 1 ? '' : 's'} matched ${flags.accepted}; ${stale.length} stale entr${stale.length === 1 ? 'y' : 'ies'} match nothing\n`);
        for (const e of stale.slice(0, 5)) process.stdout.write(`  stale: ${e.fingerprint} ${e.rule ?? ''} ${e.id ?? (e.row ? `row ${e.row}` : '')}\n`);
      }
      for (const [what, path] of [['report', flags.report], ['SARIF', flags.sarif], ['HTML report', flags.html]] as const) {
        if (path) process.stdout.write(`${what} written to ${path}\n`);
      }
    }
    return failed ? 1 : 0;
  } catch (e) {
    abortAll();
    throw e;
  } finally {
    process.removeListener('SIGINT', onSignal);
    process.removeListener('SIGTERM', onSignal);
  }
}
