/**
 * The optional first pass: rules with a `prepass` that a run's parameters ask for see every batch
 * of every input once before judging, each keeps a bounded, JSON-able state, and the states of all
 * inputs (and of shards run elsewhere) are merged into one per rule. The engine knows no rule by
 * name: it only calls the hooks.
 */
import { resolveParams } from './params.js';
import type { Quantity } from './quantities.js';
import type { RuleSelection } from './runner.js';
import type { Batch, Prepass, PrepassState, Rule } from './types.js';

/** The selected rules whose first pass the selection's parameters ask for. */
export function rulesWantingPrepass(rules: readonly Rule[], selection: RuleSelection): Rule[] {
  return rules.filter((r) => r.prepass !== undefined && r.prepass.wanted(resolveParams(r.meta, selection.params?.[r.meta.id] ?? {})));
}

/** The first pass over one input: every wanting rule whose needs are bound observes each batch. */
export class PrepassRun {
  private readonly active: { id: string; pass: Prepass }[] = [];

  constructor(rules: readonly Rule[], selection: RuleSelection, bound: ReadonlyMap<Quantity, { column: string; unit: string }>) {
    for (const rule of rulesWantingPrepass(rules, selection)) {
      if (rule.meta.needs.some((q) => !bound.has(q))) continue;
      const params = resolveParams(rule.meta, selection.params?.[rule.meta.id] ?? {});
      this.active.push({ id: rule.meta.id, pass: rule.prepass!.begin({ params, bound }) });
    }
  }

  /** True when no rule observes this input (its batches need not be read for the first pass). */
  get idle(): boolean {
    return this.active.length === 0;
  }

  observe(batch: Batch): void {
    for (const a of this.active) a.pass.observe(batch);
  }

  /** The state of each observing rule for this input. */
  states(): Map<string, PrepassState> {
    return new Map(this.active.map((a) => [a.id, a.pass.result()]));
  }
}

/**
 * Merges per-part states (one map per input or shard) rule by rule with each rule's own `merge`,
 * in the order given. A rule absent from a part (its quantities not bound there) is skipped there.
 */
export function mergePrepassStates(rules: readonly Rule[], parts: readonly ReadonlyMap<string, PrepassState>[]): Map<string, PrepassState> {
  const out = new Map<string, PrepassState>();
  for (const rule of rules) {
    if (!rule.prepass) continue;
    let acc: PrepassState | undefined;
    for (const part of parts) {
      const s = part.get(rule.meta.id);
      if (s === undefined) continue;
      acc = acc === undefined ? s : rule.prepass.merge(acc, s);
    }
    if (acc !== undefined) out.set(rule.meta.id, acc);
  }
  return out;
}
