import type { NumericQuantity, Quantity } from '../../rules/engine/quantities.js';
import { InputRun, selectRules, type RuleReport, type RuleSelection } from '../../rules/engine/runner.js';
import type { Batch, Finding, QuantityColumn, Rule } from '../../rules/engine/types.js';

export interface ColumnSpec {
  values: number[];
  /** Symmetric error, or [lower, upper] magnitudes per row. */
  err?: number[];
  errLo?: number[];
  errHi?: number[];
  unit?: string;
  column?: string;
  /** For luminosity: the numbers as written (defaults to values). */
  raw?: number[];
}

const f64 = (a: number[] | undefined) => (a ? Float64Array.from(a) : null);

/**
 * A canonical batch built straight from arrays, for rule tests that must not depend on the
 * readers or the binder.
 */
export function makeBatch(
  cols: Partial<Record<NumericQuantity, ColumnSpec>>,
  text: { id?: string[]; stage?: string[] } = {},
  firstRow = 1,
): Batch {
  const length = Object.values(cols)[0]?.values.length ?? text.id?.length ?? 0;
  const quantities: Batch['quantities'] = {};
  for (const [q, spec] of Object.entries(cols) as [NumericQuantity, ColumnSpec][]) {
    const value = Float64Array.from(spec.values);
    const errLo = f64(spec.errLo ?? spec.err);
    const errHi = f64(spec.errHi ?? spec.err);
    const col: QuantityColumn = {
      column: spec.column ?? q,
      unit: spec.unit ?? '',
      value,
      raw: Float64Array.from(spec.raw ?? spec.values),
      errLo,
      errHi,
      errColumns: [],
    };
    if (q === 'luminosity') {
      col.unit = spec.unit ?? 'solLum';
      col.log = value.map((v) => Math.log10(v));
      col.logErrLo = errLo ? errLo.map((e, i) => Math.log10(value[i]) - Math.log10(Math.max(value[i] - e, value[i] * 1e-6))) : null;
      col.logErrHi = errHi ? errHi.map((e, i) => Math.log10(value[i] + e) - Math.log10(value[i])) : null;
    }
    quantities[q] = col;
  }
  return {
    input: 0,
    length,
    firstRow,
    lines: null,
    quantities,
    text: {
      ...(text.id ? { id: { column: 'id', values: text.id } } : {}),
      ...(text.stage ? { stage: { column: 'stage', values: text.stage } } : {}),
    },
    problems: [],
    unusable: {},
  };
}

/** Runs rules over batches as the CLI does and returns the findings and per-rule accounting. */
export function runRules(rules: readonly Rule[], batches: Batch[], selection: RuleSelection = {}) {
  const bound = new Map<Quantity, { column: string; unit: string }>();
  for (const b of batches) {
    for (const [q, c] of Object.entries(b.quantities)) bound.set(q as Quantity, { column: c!.column, unit: c!.unit });
    for (const [q, c] of Object.entries(b.text)) bound.set(q as Quantity, { column: c!.column, unit: '' });
  }
  const findings: Finding[] = [];
  const run = new InputRun(selectRules(rules, selection), selection, bound, { push: (f) => findings.push(f) });
  for (const b of batches) run.processBatch(b);
  const reports: RuleReport[] = run.finish();
  return { findings, reports };
}
