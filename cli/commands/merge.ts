/**
 * `starsieve merge`: the reports of a sharded run (`check --shard K/N`, one per task of a job
 * array) combined into the report one machine would have written. Inputs belong to exactly one
 * shard and every rule judges within one input, so merging is putting the inputs back in order:
 * findings are streamed shard by shard in input order (memory does not grow with the findings),
 * the per-input parts are sorted, and the summary is summed up again.
 */
import { createReadStream } from 'node:fs';
import { createInterface } from 'node:readline';
import { ALL_RULES } from '../../rules/checks/index.js';
import { ConfigError } from '../../rules/engine/params.js';
import type { RuleReport } from '../../rules/engine/runner.js';
import { SEVERITIES, severityRank, type Finding, type Rule, type Severity } from '../../rules/engine/types.js';
import type { FailLevel } from '../options.js';
import { JsonReportWriter, REPORT_FORMAT } from '../reports/json-report.js';
import { SarifWriter } from '../reports/sarif.js';
import { TerminalCollector, renderTerminal, type InputSummary } from '../reports/terminal.js';
import { TOOL } from '../version.js';
import { InputRun, selectRules, shiftFinding } from '../../rules/engine/runner.js';
import type { Quantity } from '../../rules/engine/quantities.js';
import type { RowShift } from '../../rules/engine/types.js';
import { AcceptedSet, readAccepted } from '../reports/accepted.js';
import { fingerprint, inputName } from '../reports/fingerprint.js';
import { FileSpill } from '../spill/file-spill.js';
import { joinedReads } from '../parallel/threads.js';
import { readShardState, type ShardRange } from './byte-shard.js';

export interface MergeFlags {
  report: string;
  /** Accepted findings, for the findings a merge of byte-range shards makes itself (the whole-input judgements). */
  accepted?: string;
  sarif?: string;
  failOn?: FailLevel;
  color: boolean;
  quiet?: boolean;
  show: string;
}

type Count3 = Record<Severity, number>;
type StoredFinding = Finding & { fingerprint: string; accepted: boolean };

interface ShardTail {
  inputs: InputSummary[];
  bindings: { input: number }[];
  rules: { id: string; title: string; severity: Severity; perInput: (RuleReport & { input: number })[] }[];
  summary: { failOn: FailLevel; accepted: { matched: number; stale: { fingerprint: string }[] }; cost?: unknown };
  shard?: { index: number; count: number; paths: string[]; range?: ShardRange };
}

/** One shard report read as lines: the findings one by one, then the tail. */
class ShardReader {
  private readonly lines: AsyncIterator<string>;
  private inFindings = false;
  private seenFindings = false;
  private skipping = false;
  private tailText: string[] = [];
  private head: StoredFinding | null = null;
  private lineNo = 0;

  constructor(readonly path: string) {
    this.lines = createInterface({ input: createReadStream(path, { encoding: 'utf8' }), crlfDelay: Infinity })[Symbol.asyncIterator]();
  }

  /** The next finding without taking it; null after the last. */
  async peek(): Promise<StoredFinding | null> {
    if (this.head) return this.head;
    for (;;) {
      const r = await this.lines.next().catch((e: Error) => {
        throw new ConfigError(`cannot read ${this.path}: ${e.message}`);
      });
      if (r.done) {
        if (this.lineNo === 0) throw new ConfigError(`${this.path}: empty file, not a starsieve report`);
        return null;
      }
      const line = r.value;
      this.lineNo++;
      if (this.lineNo === 1) {
        if (!line.includes(`"format":"${REPORT_FORMAT}"`)) throw new ConfigError(`${this.path}: not a starsieve findings report`);
        continue;
      }
      if (!this.seenFindings) {
        if (!line.endsWith('"findings":[')) throw new ConfigError(`${this.path}, line ${this.lineNo}: not laid out as starsieve check writes reports`);
        this.seenFindings = this.inFindings = true;
        continue;
      }
      if (this.inFindings) {
        if (line.startsWith(']')) {
          this.inFindings = false;
          continue;
        }
        // Reading for the tail only: the findings are parsed in the second pass, not twice.
        if (this.skipping) continue;
        const text = line.endsWith(',') ? line.slice(0, -1) : line;
        try {
          this.head = JSON.parse(text) as StoredFinding;
        } catch {
          throw new ConfigError(`${this.path}, line ${this.lineNo}: not a finding (a report cut short?)`);
        }
        return this.head;
      }
      this.tailText.push(line);
    }
  }

  async take(): Promise<StoredFinding | null> {
    const f = await this.peek();
    this.head = null;
    return f;
  }

  /** The inputs, bindings, rules, summary and shard; read after the last finding. */
  async tail(): Promise<ShardTail> {
    this.skipping = true;
    while ((await this.take()) !== null);
    try {
      return JSON.parse(`{${this.tailText.join('\n').replace(/}\s*$/, '')}}`) as ShardTail;
    } catch {
      throw new ConfigError(`${this.path}: the report ends early (a shard that did not finish?)`);
    }
  }
}

function add(a: Count3, b: Count3): void {
  for (const s of SEVERITIES) a[s] += b[s];
}

export async function mergeCommand(paths: string[], flags: MergeFlags): Promise<number> {
  if (paths.length === 0) throw new ConfigError('merge needs the shard reports to combine');
  // The shard descriptions come from the tails; the findings are read in a second pass.
  const tails: ShardTail[] = [];
  for (const p of paths) tails.push(await new ShardReader(p).tail());
  const count = tails[0].shard?.count ?? 1;
  const all = tails[0].shard?.paths ?? tails[0].inputs.map((i) => i.path);
  const byIndex = new Map<number, number>();
  tails.forEach((t, k) => {
    const s = t.shard ?? { index: 1, count: 1, paths: all };
    if (s.count !== count || JSON.stringify(s.paths) !== JSON.stringify(all)) {
      throw new ConfigError(`${paths[k]}: shard ${s.index}/${s.count} of another run (other inputs or another shard count)`);
    }
    if (byIndex.has(s.index)) throw new ConfigError(`${paths[k]}: shard ${s.index}/${count} is given twice`);
    byIndex.set(s.index, k);
  });
  const missing = [...Array(count).keys()].map((i) => i + 1).filter((i) => !byIndex.has(i));
  if (missing.length) throw new ConfigError(`shard${missing.length > 1 ? 's' : ''} ${missing.join(', ')} of ${count} missing: the merged report would leave inputs out`);
  const ruleIds = tails[0].rules.map((r) => r.id);
  for (let k = 1; k < tails.length; k++) {
    if (JSON.stringify(tails[k].rules.map((r) => r.id)) !== JSON.stringify(ruleIds)) throw new ConfigError(`${paths[k]}: ran other rules than ${paths[0]}`);
  }
  const failOn = flags.failOn ?? tails[0].summary.failOn;
  const rules = ruleIds.map((id) => ALL_RULES.find((r) => r.meta.id === id)).filter((r): r is Rule => r !== undefined);
  const ranged = tails.filter((t) => t.shard?.range).length;
  if (ranged > 0 && ranged < tails.length) throw new ConfigError('these reports mix shards of one file (byte ranges) with shards by file');
  if (ranged > 0) return mergeRanges(paths, tails, byIndex, rules, failOn, flags);

  const writer = new JsonReportWriter(flags.report, TOOL);
  const sarif = flags.sarif ? new SarifWriter(flags.sarif, TOOL, rules, all) : null;
  const collector = new TerminalCollector(Math.max(0, Number(flags.show) || 0));
  const totals: Count3 = { error: 0, warning: 0, note: 0 };
  const failing: Count3 = { error: 0, warning: 0, note: 0 };
  try {
    const readers = paths.map((p) => new ShardReader(p));
    for (let input = 0; input < all.length; input++) {
      const reader = readers[byIndex.get((input % count) + 1)!];
      for (let f = await reader.peek(); f !== null && f.input === input; f = await reader.peek()) {
        await reader.take();
        const { fingerprint, accepted, ...finding } = f;
        writer.push(finding, fingerprint, accepted);
        sarif?.push(finding);
        collector.push(finding);
        totals[finding.severity]++;
        if (!accepted) failing[finding.severity]++;
      }
    }
    for (const r of readers) {
      if ((await r.peek()) !== null) throw new ConfigError(`${r.path}: findings out of input order (not a shard report written by check?)`);
    }
    const inputs = tails.flatMap((t) => t.inputs).sort((a, b) => a.index - b.index);
    const bindings = tails.flatMap((t) => t.bindings).sort((a, b) => a.input - b.input);
    const ruleRows = tails[0].rules.map((r, j) => ({
      id: r.id,
      title: r.title,
      severity: r.severity,
      perInput: tails.flatMap((t) => t.rules[j].perInput).sort((a, b) => a.input - b.input),
    }));
    const byRule: Record<string, Count3> = {};
    for (const r of ruleRows) {
      const c: Count3 = { error: 0, warning: 0, note: 0 };
      for (const p of r.perInput) add(c, p.findings);
      byRule[r.id] = c;
    }
    const failed = failOn !== 'never' && SEVERITIES.some((s) => failing[s] > 0 && severityRank(s) >= severityRank(failOn as Severity));
    // An accepted entry is stale only if it matched in no shard.
    let stale = tails[0].summary.accepted.stale;
    for (const t of tails.slice(1)) {
      const there = new Set(t.summary.accepted.stale.map((e) => e.fingerprint));
      stale = stale.filter((e) => there.has(e.fingerprint));
    }
    const summary = {
      findings: totals,
      byRule,
      rows: inputs.reduce((a, i) => a + i.rows, 0),
      rowsWithFindings: inputs.reduce((a, i) => a + i.rowsWithFindings, 0),
      failOn,
      failed,
      accepted: { matched: tails.reduce((a, t) => a + t.summary.accepted.matched, 0), stale },
      cost: { ...mergedCost(tails), shards: [...byIndex.keys()].sort((a, b) => a - b).map((k) => tails[byIndex.get(k)!].summary.cost ?? null) },
    };
    writer.commit({ inputs, bindings, rules: ruleRows, summary });
    sarif?.commit();
    if (!flags.quiet) {
      const rows = ruleRows.map((r) => ({ id: r.id, reports: r.perInput }));
      process.stdout.write(renderTerminal(inputs, rows, collector, { color: flags.color, failOn, failed }));
      process.stdout.write(`merged ${paths.length} shard report${paths.length === 1 ? '' : 's'} (${all.length} input${all.length === 1 ? '' : 's'}) into ${flags.report}\n`);
    }
    return failed ? 1 : 0;
  } catch (e) {
    writer.abort();
    sarif?.abort();
    throw e;
  }
}

/** The shards ran side by side: the wall time of the slowest, the rows of all, the largest process. */
function mergedCost(tails: ShardTail[]) {
  const costs = tails.map((t) => t.summary.cost as { wallSeconds?: number; peakRssMb?: number } | undefined);
  const wall = Math.max(0, ...costs.map((c) => c?.wallSeconds ?? 0));
  const rows = tails.reduce((a, t) => a + t.inputs.reduce((b, i) => b + i.rows, 0), 0);
  return { wallSeconds: wall, rowsPerSecond: Math.round(rows / Math.max(wall, 1e-3)), peakRssMb: Math.max(0, ...costs.map((c) => c?.peakRssMb ?? 0)) };
}

/**
 * Shards that each checked a byte range of one file: their findings renumbered as rows of the
 * whole file and written in range order, then the rules' saved states absorbed in the same
 * order by one run that finishes the input, whose end-of-input findings (column verdicts, held
 * rows, duplicates) come last, as in a single run.
 */
async function mergeRanges(paths: string[], tails: ShardTail[], byIndex: Map<number, number>, rules: Rule[], failOn: FailLevel, flags: MergeFlags): Promise<number> {
  const count = tails.length;
  const order = [...Array(count).keys()].map((i) => byIndex.get(i + 1)!);
  const path = tails[0].shard!.paths[0];
  const ranges = order.map((k) => tails[k].shard!.range!);
  for (let j = 1; j < count; j++) {
    if (ranges[j].start !== ranges[j - 1].end) throw new ConfigError(`${paths[order[j]]}: its byte range does not follow the previous shard's (shards of different versions of the file?)`);
  }
  // Shards number lines as in the file; rows from their range's start.
  const shifts: RowShift[] = [];
  let rowsBefore = 0;
  for (const r of ranges) {
    shifts.push({ rows: rowsBefore, lines: 0 });
    rowsBefore += r.rows;
  }
  const first = tails[order[0]];
  const selection = {
    only: first.rules.map((r) => r.id),
    params: Object.fromEntries(first.rules.map((r) => [r.id, { ...(r.perInput[0]?.params ?? {}) }])),
  };
  const binding = first.bindings[0] as unknown as { input: number; columns: { quantity: Quantity; column: string; unit: string }[] };
  const bound = new Map<Quantity, { column: string; unit: string }>();
  for (const c of binding.columns) bound.set(c.quantity, { column: c.column, unit: c.unit });

  const accepted = new AcceptedSet(flags.accepted ? readAccepted(flags.accepted) : null);
  const name = inputName(path);
  const writer = new JsonReportWriter(flags.report, TOOL);
  const sarif = flags.sarif ? new SarifWriter(flags.sarif, TOOL, rules, [path]) : null;
  const collector = new TerminalCollector(Math.max(0, Number(flags.show) || 0));
  const totals: Count3 = { error: 0, warning: 0, note: 0 };
  const failing: Count3 = { error: 0, warning: 0, note: 0 };
  const rowsWithFindings = new Set<number>();
  const emit = (finding: Finding, fp: string, ok: boolean) => {
    writer.push(finding, fp, ok);
    sarif?.push(finding);
    collector.push(finding);
    totals[finding.severity]++;
    if (!ok) failing[finding.severity]++;
    if (finding.row !== null) rowsWithFindings.add(finding.row);
  };
  try {
    // Every shard made the same first pass over the whole file (--relation catalog), if any.
    const firstState = readShardState(paths[order[0]], ranges[0]);
    const prepass = firstState.prepass ? new Map(firstState.prepass) : undefined;
    const final = new InputRun(selectRules(ALL_RULES, selection), selection, bound, {
      push: (f) => {
        const fp = fingerprint(f, name);
        emit(f, fp, accepted.match(fp));
      },
    }, undefined, prepass, new FileSpill({ keepAbsorbed: true }));
    // Shard by shard: absorb its rules' states, then hand on its findings, renumbered, through
    // the rules' filters (a rule with a cap may drop some a later range listed).
    const ends = [];
    for (let j = 0; j < count; j++) {
      const k = order[j];
      const saved = j === 0 ? firstState : readShardState(paths[k], ranges[j]);
      final.absorbState(saved.state, shifts[j]);
      ends.push({ stats: saved.stats, counts: saved.counts, notes: tails[k].inputs[0]?.notes ?? [] });
      // A stored finding keeps its fingerprint and accepted mark on the way through the filters.
      const admit = final.admitting({
        push: (f) => {
          const { fingerprint: fp, accepted: ok, ...finding } = f as StoredFinding;
          emit(finding, fp, ok);
        },
      });
      const reader = new ShardReader(paths[k]);
      for (let f = await reader.take(); f !== null; f = await reader.take()) admit.push(shiftFinding(f, shifts[j]));
      admit.end();
    }
    const reports = final.finish();
    const read = joinedReads(ends);
    const binderNotes = (first.bindings[0] as unknown as { notes?: string[] }).notes ?? [];
    const input: InputSummary = {
      ...first.inputs[0],
      records: read.stats.records,
      rows: read.stats.rows,
      unparseableRecords: read.stats.unparseable,
      rowsWithFindings: rowsWithFindings.size,
      notes: read.notes.filter((n) => !binderNotes.includes(n)).concat(binderNotes),
    };
    const ruleRows = first.rules.map((r) => ({ id: r.id, title: r.title, severity: r.severity, perInput: [{ input: 0, ...reports.find((x) => x.id === r.id)! }] }));
    const byRule: Record<string, Count3> = {};
    for (const r of ruleRows) byRule[r.id] = { ...r.perInput[0].findings };
    const failed = failOn !== 'never' && SEVERITIES.some((s) => failing[s] > 0 && severityRank(s) >= severityRank(failOn as Severity));
    let stale = first.summary.accepted.stale;
    for (const t of tails) {
      const there = new Set(t.summary.accepted.stale.map((e) => e.fingerprint));
      stale = stale.filter((e) => there.has(e.fingerprint));
    }
    if (flags.accepted) {
      const notMatchedHere = new Set(accepted.stale().map((e) => e.fingerprint));
      stale = stale.filter((e) => notMatchedHere.has(e.fingerprint));
    }
    const summary = {
      findings: totals,
      byRule,
      rows: input.rows,
      rowsWithFindings: input.rowsWithFindings,
      failOn,
      failed,
      accepted: { matched: tails.reduce((a, t) => a + t.summary.accepted.matched, 0) + accepted.accepted, stale },
      cost: { ...mergedCost(tails), shards: order.map((k) => tails[k].summary.cost ?? null) },
    };
    writer.commit({ inputs: [input], bindings: [first.bindings[0]], rules: ruleRows, summary });
    sarif?.commit();
    if (!flags.quiet) {
      process.stdout.write(renderTerminal([input], ruleRows.map((r) => ({ id: r.id, reports: r.perInput })), collector, { color: flags.color, failOn, failed }));
      process.stdout.write(`merged ${count} shard report${count === 1 ? '' : 's'} (byte ranges of ${path}) into ${flags.report}\n`);
    }
    return failed ? 1 : 0;
  } catch (e) {
    writer.abort();
    sarif?.abort();
    throw e;
  }
}
