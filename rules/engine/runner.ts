import { ConfigError, resolveParams } from './params.js';
import type { SpillStore } from './spill.js';
import type { Quantity } from './quantities.js';
import {
  RuleStats,
  SEVERITIES,
  type Batch,
  type Finding,
  type FindingSink,
  type ParamValue,
  type ParamValues,
  type PrepassState,
  type RangeFilter,
  type RangeState,
  type RowShift,
  type Rule,
  type RuleRun,
  type Severity,
} from './types.js';

export interface RuleSelection {
  /** Only these rule ids, when given. */
  only?: readonly string[];
  /** Never these rule ids. */
  skip?: readonly string[];
  /** Parameter overrides by rule id, then parameter name. */
  params?: Readonly<Record<string, Readonly<Record<string, ParamValue>>>>;
}

export interface RuleReport {
  id: string;
  severity: Severity;
  status: 'ran' | 'skipped';
  /** Why the rule did not run, when skipped. */
  reason: string | null;
  params: ParamValues;
  checked: number;
  skipped: Record<string, number>;
  findings: Record<Severity, number>;
  details: Record<string, unknown>;
}

/** Checks a selection against the registry before any input is read, so typos fail fast. */
export function selectRules(registry: readonly Rule[], selection: RuleSelection): Rule[] {
  const known = new Set(registry.map((r) => r.meta.id));
  for (const id of [...(selection.only ?? []), ...(selection.skip ?? []), ...Object.keys(selection.params ?? {})]) {
    if (!known.has(id)) throw new ConfigError(`unknown rule "${id}" (see \`starsieve rules\`)`);
  }
  const chosen = registry.filter(
    (r) => (!selection.only || selection.only.includes(r.meta.id)) && !(selection.skip ?? []).includes(r.meta.id),
  );
  for (const r of chosen) resolveParams(r.meta, selection.params?.[r.meta.id] ?? {});
  // Screening rules first: they mark cells the judging rules must not judge again.
  return [...chosen.filter((r) => r.meta.stage === 'screen'), ...chosen.filter((r) => r.meta.stage === 'judge')];
}

interface ActiveRule {
  rule: Rule;
  run: RuleRun;
  stats: RuleStats;
}

/** Collects one batch's findings so they reach the sink in row order whatever rule made them. */
class BatchBuffer implements FindingSink {
  readonly items: Finding[] = [];
  push(f: Finding): void {
    this.items.push(f);
  }
}

/** What saveState gives: the rows, accounting and rule states of one row range. */
export interface InputRunState {
  rows: number;
  rules: { id: string; checked: number; skipped: [string, number][]; findings: Record<Severity, number>; state: RangeState }[];
}

/** A finding of a row range, renumbered as a row of the whole input. */
export function shiftFinding(f: Finding, shift: RowShift): Finding {
  if (shift.rows === 0 && shift.lines === 0) return f;
  return { ...f, row: f.row === null ? null : f.row + shift.rows, line: f.line === null ? null : f.line + shift.lines };
}

const SEVERITY_ORDER: Record<Severity, number> = { error: 0, warning: 1, note: 2 };

/**
 * Links the findings that share a row: the likeliest root cause (a screening rule's finding, else
 * the most severe, else the first rule in order) is named on the others, so a curator reads the
 * cause first and one slip does not read as five independent problems. `group` is sorted.
 */
function linkRow(group: Finding[], rank: ReadonlyMap<string, number>): void {
  if (group.length < 2) return;
  const key = (f: Finding) => (rank.get(f.rule) ?? 0) * 10 + SEVERITY_ORDER[f.severity];
  const root = group.reduce((a, b) => (key(b) < key(a) ? b : a));
  const order = [root.rule, ...group.filter((f) => f !== root).map((f) => f.rule)];
  for (const f of group) {
    f.related = order.filter((r) => r !== f.rule);
    f.cause = f === root ? null : root.rule;
  }
}

/** What one part of a split run hands on: its rules' end-of-input findings and accounting. */
export interface PartResult {
  findings: Finding[];
  reports: RuleReport[];
}

/**
 * Runs the selected rules over the batches of one input. The engine knows no rule by name.
 *
 * A run may be split in two along the rule order (`part`): one InputRun checks a batch with the
 * first rules (in another thread, say) and hands the batch, with the cells its screening rules
 * marked and the findings it made, to a second InputRun that checks it with the rest. Rules run in
 * the same order on the same batches either way, so the findings are those of one run.
 */
export class InputRun {
  private readonly active: ActiveRule[] = [];
  private readonly reports = new Map<string, RuleReport>();
  /** Rule order used to pick a row's root cause: screening rules first, then registry order. */
  private readonly rank = new Map<string, number>();
  private rows = 0;
  /** The filters the rules gave for the range absorbed last (see admitting). */
  private readonly filters = new Map<string, RangeFilter>();

  constructor(
    rules: readonly Rule[],
    selection: RuleSelection,
    bound: ReadonlyMap<Quantity, { column: string; unit: string }>,
    private readonly sink: FindingSink,
    /** Only the rules at these positions of `rules` run here; all of them by default. */
    part: { from: number; to: number } = { from: 0, to: rules.length },
    /** Merged first-pass states by rule id (rules/engine/prepass.ts), handed to `start` as `ctx.prepass`. */
    prepass?: ReadonlyMap<string, PrepassState>,
    /** Where rules may keep per-row records until the end of the input (see spill.ts). */
    spill?: SpillStore,
    /** The input's first rows (RunContext.sample). */
    sample?: Batch,
  ) {
    rules.forEach((r, i) => this.rank.set(r.meta.id, (r.meta.stage === 'screen' ? 0 : 100) + i));
    rules.forEach((rule, i) => {
      const params = resolveParams(rule.meta, selection.params?.[rule.meta.id] ?? {});
      const missing = rule.meta.needs.filter((q) => !bound.has(q));
      const report: RuleReport = {
        id: rule.meta.id,
        severity: rule.meta.severity,
        status: missing.length ? 'skipped' : 'ran',
        reason: missing.length ? `needs ${missing.join(', ')}, not bound in this input` : null,
        params,
        checked: 0,
        skipped: {},
        findings: { error: 0, warning: 0, note: 0 },
        details: {},
      };
      this.reports.set(rule.meta.id, report);
      if (!missing.length && i >= part.from && i < part.to) this.active.push({ rule, run: rule.start({ params, bound, prepass: prepass?.get(rule.meta.id), spill, sample }), stats: new RuleStats() });
    });
  }

  /** The findings this run's rules make on one batch, in rule order, not yet sorted or emitted. */
  checkBatch(batch: Batch): Finding[] {
    const buffer = new BatchBuffer();
    for (const a of this.active) a.run.check(batch, buffer, a.stats);
    return buffer.items;
  }

  /** Checks a batch and emits its findings in row order; `earlier` are those of the rules before this part. */
  processBatch(batch: Batch, earlier: readonly Finding[] = []): void {
    this.rows += batch.length;
    const own = this.checkBatch(batch);
    const items = earlier.length ? [...earlier, ...own] : own;
    items.sort((x, y) => (x.row ?? 0) - (y.row ?? 0) || SEVERITY_ORDER[x.severity] - SEVERITY_ORDER[y.severity]);
    for (let a = 0; a < items.length; ) {
      let b = a + 1;
      while (b < items.length && items[b].row === items[a].row) b++;
      if (b - a > 1 && items[a].row !== null) linkRow(items.slice(a, b), this.rank);
      a = b;
    }
    for (const f of items) this.emit(f);
  }

  /** Ends the input for the first part of a split run: its end-of-input findings and accounting. */
  finishPart(): PartResult {
    const findings: Finding[] = [];
    for (const a of this.active) a.run.finish?.({ push: (f) => findings.push(f) }, a.stats);
    return { findings, reports: this.active.map((a) => this.account(a)) };
  }

  /**
   * Ends the input: whole-column rules judge now; returns each rule's accounting. `earlier` is the
   * first part's result in a split run; its findings come first, as its rules come first.
   */
  finish(earlier?: PartResult): RuleReport[] {
    if (earlier) {
      for (const f of earlier.findings) this.emit(f);
      for (const r of earlier.reports) {
        const mine = this.reports.get(r.id)!;
        mine.checked = r.checked;
        mine.skipped = r.skipped;
        mine.details = r.details;
      }
    }
    for (const a of this.active) {
      a.run.finish?.({ push: (f) => this.emit(f) }, a.stats);
      this.account(a);
    }
    for (const r of this.reports.values()) {
      if (r.status === 'skipped') r.skipped = { [r.reason ?? 'not run']: this.rows };
    }
    return [...this.reports.values()];
  }

  /**
   * Whether this input may be checked in row ranges: every rule that keeps state between batches
   * (it has `finish` or `summary`) can save and absorb it.
   */
  splittable(): boolean {
    return this.active.every((a) => (!a.run.finish && !a.run.summary) || (a.run.save && a.run.absorb));
  }

  /** The state of a run over one row range, to be absorbed by the run that finishes the input. */
  saveState(): InputRunState {
    return {
      rows: this.rows,
      rules: this.active.map((a) => ({
        id: a.rule.meta.id,
        checked: a.stats.checked,
        skipped: [...a.stats.skipped],
        findings: { ...this.reports.get(a.rule.meta.id)!.findings },
        state: a.run.save?.(),
      })),
    };
  }

  /**
   * Takes in the state of the next row range, its rows and lines shifted by `shift`, as if this run
   * had checked them. Ranges are absorbed in order; the findings those ranges emitted while
   * checking go to the sink by the caller, shifted alike (shiftFinding), before `finish`.
   */
  absorbState(state: InputRunState, shift: RowShift): void {
    this.filters.clear();
    this.rows += state.rows;
    const byId = new Map(state.rules.map((r) => [r.id, r]));
    for (const a of this.active) {
      const r = byId.get(a.rule.meta.id);
      if (!r) throw new Error(`a row range was checked without rule ${a.rule.meta.id}`);
      a.stats.checked += r.checked;
      for (const [reason, n] of r.skipped) a.stats.skip(reason, n);
      const counts = this.reports.get(a.rule.meta.id)!.findings;
      for (const s of SEVERITIES) counts[s] += r.findings[s];
      if (r.state !== undefined) {
        const filter = a.run.absorb!(r.state, shift);
        if (filter) this.filters.set(a.rule.meta.id, filter);
      }
    }
  }

  /**
   * Where the findings of the range absorbed last go, renumbered, in the order it made them:
   * through the rules' filters (RuleRun.absorb) to `sink`. A row that loses a finding is linked
   * again among the findings it keeps, as one pass would have linked them; `end()` after the last.
   */
  admitting(sink: FindingSink): FindingSink & { end(): void } {
    const filters = new Map(this.filters);
    if (filters.size === 0) return { push: (f) => sink.push(f), end: () => undefined };
    let group: Finding[] = [];
    let dropped = false;
    const flush = () => {
      if (dropped) {
        if (group.length === 1) {
          group[0].cause = null;
          group[0].related = [];
        } else linkRow(group, this.rank);
      }
      for (const f of group) sink.push(f);
      group = [];
      dropped = false;
    };
    return {
      push: (f) => {
        if (f.row === null || (group.length && group[0].row !== f.row)) flush();
        const keep = filters.get(f.rule)?.(f) ?? true;
        if (!keep) {
          this.reports.get(f.rule)!.findings[f.severity]--;
          dropped = true;
        } else if (f.row === null) sink.push(f);
        else group.push(f);
      },
      end: flush,
    };
  }

  /**
   * The accounting of a run over one row range that will not finish here (a shard of one file):
   * rows checked and skipped and findings so far; `details` waits for the run that finishes.
   */
  reportsSoFar(): RuleReport[] {
    for (const a of this.active) this.account(a, false);
    for (const r of this.reports.values()) {
      if (r.status === 'skipped') r.skipped = { [r.reason ?? 'not run']: this.rows };
    }
    return [...this.reports.values()].map((r) => ({ ...r, skipped: { ...r.skipped }, findings: { ...r.findings } }));
  }

  private account(a: ActiveRule, details = true): RuleReport {
    const r = this.reports.get(a.rule.meta.id)!;
    r.checked = a.stats.checked;
    r.skipped = Object.fromEntries(a.stats.skipped);
    if (details) r.details = a.run.summary?.() ?? {};
    return r;
  }

  private emit(f: Finding): void {
    this.reports.get(f.rule)!.findings[f.severity]++;
    this.sink.push(f);
  }
}
