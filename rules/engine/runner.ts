import { ConfigError, resolveParams } from './params.js';
import type { Quantity } from './quantities.js';
import {
  RuleStats,
  type Batch,
  type Finding,
  type FindingSink,
  type ParamValue,
  type ParamValues,
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

/** Runs the selected rules over the batches of one input. The engine knows no rule by name. */
export class InputRun {
  private readonly active: ActiveRule[] = [];
  private readonly reports = new Map<string, RuleReport>();
  /** Rule order used to pick a row's root cause: screening rules first, then registry order. */
  private readonly rank = new Map<string, number>();
  private rows = 0;

  constructor(
    rules: readonly Rule[],
    selection: RuleSelection,
    bound: ReadonlyMap<Quantity, { column: string; unit: string }>,
    private readonly sink: FindingSink,
  ) {
    rules.forEach((r, i) => this.rank.set(r.meta.id, (r.meta.stage === 'screen' ? 0 : 100) + i));
    for (const rule of rules) {
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
      if (!missing.length) this.active.push({ rule, run: rule.start({ params, bound }), stats: new RuleStats() });
    }
  }

  processBatch(batch: Batch): void {
    this.rows += batch.length;
    const buffer = new BatchBuffer();
    for (const a of this.active) a.run.check(batch, buffer, a.stats);
    const items = buffer.items;
    items.sort((x, y) => (x.row ?? 0) - (y.row ?? 0) || SEVERITY_ORDER[x.severity] - SEVERITY_ORDER[y.severity]);
    for (let a = 0; a < items.length; ) {
      let b = a + 1;
      while (b < items.length && items[b].row === items[a].row) b++;
      if (b - a > 1 && items[a].row !== null) linkRow(items.slice(a, b), this.rank);
      a = b;
    }
    for (const f of items) this.emit(f);
  }

  /** Ends the input: whole-column rules judge now; returns each rule's accounting. */
  finish(): RuleReport[] {
    for (const a of this.active) {
      a.run.finish?.({ push: (f) => this.emit(f) }, a.stats);
      const r = this.reports.get(a.rule.meta.id)!;
      r.checked = a.stats.checked;
      r.skipped = Object.fromEntries(a.stats.skipped);
      r.details = a.run.summary?.() ?? {};
    }
    for (const r of this.reports.values()) {
      if (r.status === 'skipped') r.skipped = { [r.reason ?? 'not run']: this.rows };
    }
    return [...this.reports.values()];
  }

  private emit(f: Finding): void {
    this.reports.get(f.rule)!.findings[f.severity]++;
    this.sink.push(f);
  }
}
