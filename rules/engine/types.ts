import type { NumericQuantity, Quantity, TextQuantity } from './quantities.js';
import type { SpillStore } from './spill.js';

export type Severity = 'error' | 'warning' | 'note';
export const SEVERITIES: readonly Severity[] = ['error', 'warning', 'note'];

/** Severity rank: higher is more serious. */
export function severityRank(s: Severity): number {
  return s === 'error' ? 3 : s === 'warning' ? 2 : 1;
}

/** One bound numeric quantity of a batch, in canonical units. NaN marks a missing cell. */
export interface QuantityColumn {
  /** Catalog column the value came from. */
  column: string;
  /** Unit the column was read in (a VOUnits string, e.g. `W`, `log(solLum)`). */
  unit: string;
  /** Value in the canonical unit of the quantity. */
  value: Float64Array;
  /** The number as written in the catalog, before any conversion. */
  raw: Float64Array;
  /** Lower and upper uncertainty magnitudes (>= 0) in the canonical unit; null when no error column. */
  errLo: Float64Array | null;
  errHi: Float64Array | null;
  /** Columns the uncertainties came from. */
  errColumns: string[];
  /**
   * For luminosity: log10 of the value and its uncertainties in dex. Kept alongside because
   * catalogs quote log L errors in dex and converting them through linear space loses the asymmetry.
   */
  log?: Float64Array;
  logErrLo?: Float64Array | null;
  logErrHi?: Float64Array | null;
  /** The uncertainties as written (signs kept, catalog units), for rules that judge the error columns themselves. */
  errRaw?: WrittenErrors;
}

/**
 * Uncertainty cells exactly as the catalog wrote them, before the binder took magnitudes and
 * converted units: `lo` and `hi` are the same array for a symmetric error. `loStoredNegative` is the
 * column's convention (NASA `err2`, PHL `_ERROR_MIN`), so a positive cell there is a wrong sign.
 */
export interface WrittenErrors {
  lo: Float64Array | null;
  hi: Float64Array | null;
  loColumn: string | null;
  hiColumn: string | null;
  symmetric: boolean;
  loStoredNegative: boolean;
}

export interface TextColumn {
  column: string;
  values: (string | null)[];
}

/** A cell or record the reader or binder could not turn into a value. Sparse: one entry per problem. */
export interface InputProblem {
  /** Index within the batch. */
  index: number;
  /** `sentinel`: a missing-value code written as text (`...`); `lenient`: read as a number, with a note (`51,230`, `1.0D+26`). */
  kind: 'unparseable' | 'malformed' | 'sentinel' | 'lenient';
  column: string | null;
  text: string;
  message: string;
  /** Physical line of a record that made no row (index -1), where the format has lines. */
  line?: number | null;
}

/**
 * A columnar batch of catalog rows in canonical units. Rules loop over the typed arrays; there is
 * no object per row.
 */
export interface Batch {
  input: number;
  length: number;
  /** 1-based data row of the batch's first row. */
  firstRow: number;
  /** Physical line of each row in text formats; null for binary formats. */
  lines: Int32Array | null;
  quantities: Partial<Record<NumericQuantity, QuantityColumn>>;
  text: Partial<Record<TextQuantity, TextColumn>>;
  problems: InputProblem[];
  /**
   * Cells a screening rule judged unusable (a likely unit mix-up, a sentinel). Judging rules skip
   * them, so one bad cell yields one finding from the rule that understands it.
   */
  unusable: Partial<Record<NumericQuantity, Uint8Array>>;
  /**
   * Numbers about the whole input measured once on its first rows (the binder's sample; see
   * SampleFact), the same object for every batch of the input, so a rule that needs a robust
   * statistic of the column judges every row alike whatever the batch size or the row range.
   * Absent where no sample was taken (rule tests): rules then measure the batch itself.
   */
  facts?: Readonly<Record<string, number>>;
}

/** A number the command line measures on an input's first rows and hands every batch in `facts`. */
export interface SampleFact {
  name: string;
  measure(sample: Batch): number;
}

export interface ParamSpec {
  name: string;
  type: 'number' | 'string' | 'boolean';
  default: number | string | boolean;
  description: string;
  choices?: readonly string[];
  min?: number;
  max?: number;
}

export type ParamValue = number | string | boolean;
export type ParamValues = Readonly<Record<string, ParamValue>>;

export interface Reference {
  /** Citation, e.g. "Eker et al. 2018, MNRAS 479, 5491". */
  cite: string;
  note?: string;
}

/** A rule's documentation as structured text; `starsieve rules` and the README are made from it. */
export interface RuleDoc {
  /** What it catches, one or two sentences. */
  catches: string;
  /** Why it matters, with the physics. */
  why: string;
  /** An example row that fires, and why. */
  fires: string;
  /** An example row that stays silent, and why. */
  silent: string;
  /** Where the result could mislead: thresholds, validity ranges. */
  cautions: string;
}

export interface RuleMeta {
  id: string;
  title: string;
  severity: Severity;
  /**
   * `screen` rules run first on each batch and may mark cells unusable for the `judge` rules that
   * follow. Within a stage, rules run in registry order.
   */
  stage: 'screen' | 'judge';
  /** Quantities that must all be bound for the rule to run. */
  needs: readonly NumericQuantity[];
  /** Quantities the rule uses when they are bound. */
  uses: readonly Quantity[];
  params: readonly ParamSpec[];
  references: readonly Reference[];
  doc: RuleDoc;
}

export interface ExpectedValue {
  value?: number;
  min?: number;
  max?: number;
  unit: string;
}

export interface Suggestion {
  column: string;
  value: number;
  unit: string;
  text: string;
}

export interface Finding {
  rule: string;
  severity: Severity;
  input: number;
  /** `row` findings point at one data row; `column` findings speak for a whole column. */
  scope: 'row' | 'column';
  /** 1-based data row; null for column findings. */
  row: number | null;
  /** Physical line in text formats; null otherwise. */
  line: number | null;
  /** The star's identifier where one is bound. */
  id: string | null;
  columns: string[];
  values: Record<string, number | string | null>;
  expected: ExpectedValue | null;
  message: string;
  suggestion: Suggestion | null;
  /**
   * When other rules fired on the same row: the rule whose finding most likely explains this one
   * (a screening rule's, else the most severe), or null when this finding is that root itself.
   */
  cause: string | null;
  /** The other rules that fired on the same row, the likely root cause first. */
  related: string[];
}

export interface FindingSink {
  push(f: Finding): void;
}

/** Row accounting for one rule: every row is either checked or skipped for a stated reason. */
export class RuleStats {
  checked = 0;
  readonly skipped = new Map<string, number>();
  skip(reason: string, n = 1): void {
    this.skipped.set(reason, (this.skipped.get(reason) ?? 0) + n);
  }
}

/** What a rule knows about the run when it starts. */
export interface RunContext {
  params: ParamValues;
  /** Bound quantities, with the column and unit each came from. */
  bound: ReadonlyMap<Quantity, { column: string; unit: string }>;
  /**
   * The merged result of the rule's first pass over the whole catalog (every input and shard), for
   * rules with a `prepass` that asked for one; undefined when no first pass ran.
   */
  prepass?: PrepassState;
  /**
   * Where a rule may keep per-row records until the end of the input instead of in memory (see
   * spill.ts); absent in tests and plain library use, where rules fall back to MemorySpill.
   */
  spill?: SpillStore;
  /**
   * The input's first rows (up to the binder's sample size, 16384), converted like any batch:
   * for rules that judge a row against a habit or a typical value of the whole column, which must
   * not depend on which rows came earlier in the same batch or range. A rule must not mark it
   * (copy `unusable` first). Every run over the input (any thread, range or shard) gets the same
   * sample; absent in rule tests and in the run that only absorbs and finishes (merge), where a
   * rule falls back to what it has.
   */
  sample?: Batch;
}

/** A value that survives JSON.stringify and JSON.parse unchanged. */
export type JsonValue = null | boolean | number | string | JsonValue[] | { [key: string]: JsonValue };

/**
 * What a rule's first pass collected: a plain JSON object of bounded size (counts and sums per bin,
 * fixed-size sketches; never one entry per row), so shards can write it and a later step merge it.
 */
export type PrepassState = { [key: string]: JsonValue };

/** The first pass of a rule over one input: it sees every batch, then gives its state. */
export interface Prepass {
  observe(batch: Batch): void;
  result(): PrepassState;
}

/**
 * An optional first pass for rules that judge against something the catalog itself determines (a
 * relation fitted to its own stars). The engine runs it only where `wanted` says so, merges the
 * states of all inputs and shards with `merge`, and hands the result to `start` as `ctx.prepass`.
 */
export interface RulePrepass {
  /** Whether a run with these parameters needs the first pass at all (one pass stays the default). */
  wanted(params: ParamValues): boolean;
  begin(ctx: RunContext): Prepass;
  /** Combines two states; pure, associative and commutative up to floating-point rounding. */
  merge(a: PrepassState, b: PrepassState): PrepassState;
}

/**
 * Where a later part of an input starts, when one input is checked in row ranges (threads, shards
 * of one file): each range numbers its rows from 1 and its physical lines from 1, and this is what
 * must be added to turn them into the numbers of the whole input.
 */
export interface RowShift {
  rows: number;
  lines: number;
}

/**
 * What a rule run kept over its range for `finish` and `summary`, as data: plain objects, arrays,
 * numbers, strings, Maps, typed arrays, and SpillHandles; never functions or class instances, so
 * it survives a thread's structured clone and the v8 serializer of a shard's state file.
 */
export type RangeState = unknown;

/** See RuleRun.absorb: true keeps a finding of the range just absorbed, false drops it. */
export type RangeFilter = (f: Finding) => boolean;

export interface RuleRun {
  /**
   * Checks one batch. The findings pushed here must depend on the batch alone (and the run's
   * parameters): anything that needs earlier rows waits for `finish`, so that an input checked in
   * row ranges gives the findings of one pass.
   */
  check(batch: Batch, out: FindingSink, stats: RuleStats): void;
  /** Called once after the last batch of an input, for rules that judge the whole column. */
  finish?(out: FindingSink, stats: RuleStats): void;
  /** Extra facts for the summary (relation used, chance exceedances ...). */
  summary?(): Record<string, unknown>;
  /**
   * For an input checked in row ranges: what this run kept over its rows (see RangeState). Rules
   * that keep nothing between batches omit `save` and `absorb`; a rule with `finish` or `summary`
   * but no `save` makes the input run in one range.
   */
  save?(): RangeState;
  /**
   * Takes in the state `save` gave on a run over the rows that follow all rows this run has seen
   * or absorbed, as if this run had checked those rows itself; that run's row and line numbers
   * are shifted by `shift`. A fresh run that absorbs the states of every range in order, then
   * finishes, gives the `finish` findings and `summary` of a single run over the whole input.
   *
   * A rule that lists only the first rows of a kind while checking (a cap) cannot know, in a
   * later range, how many the ranges before it listed: it returns a RangeFilter, which is asked,
   * in row order, about each finding this rule made while checking that range (renumbered), and
   * says whether one pass would have made it.
   */
  absorb?(state: RangeState, shift: RowShift): RangeFilter | void;
}

export interface Rule {
  meta: RuleMeta;
  start(ctx: RunContext): RuleRun;
  prepass?: RulePrepass;
}
