/**
 * The evaluation harness: plant errors of every kind starsieve claims to catch into a real catalog
 * at rows chosen by a seeded generator, run the linter over the planted catalog in-process (the
 * readers, the binder and the engine, as `starsieve check` does), and measure per kind the recall,
 * the share of findings at planted rows that name the right cause, and the false alarms on the rows
 * left untouched. Rounds plant disjoint sets of rows afresh, so the false-alarm rate is measured with
 * the plants present, as in a real catalog with a few slips.
 */
import { readFileSync } from 'node:fs';
import { ALL_RULES } from '../../rules/checks/index.js';
import { RowInputs, RowRelations, Cell as RowCell } from '../../rules/checks/shared/row-relations.js';
import { LUMINOSITY_READINGS, MASS_READINGS, readingLog, type UnitReading } from '../../rules/checks/shared/unit-readings.js';
import { mergePrepassStates, PrepassRun } from '../../rules/engine/prepass.js';
import type { NumericQuantity, Quantity } from '../../rules/engine/quantities.js';
import { InputRun, selectRules, type RuleReport, type RuleSelection } from '../../rules/engine/runner.js';
import type { Batch, Finding } from '../../rules/engine/types.js';
import { starClasses } from '../../rules/physics/classify.js';
import { bindColumns, toBatch } from '../../cli/binding/bind.js';
import type { Binding, BindOptions } from '../../cli/binding/types.js';
import { openCatalog } from '../../cli/readers/open.js';
import type { RawBatch } from '../../cli/readers/types.js';
import { rng } from '../helpers/rng.js';
import { KINDS, cloneColumn, getCell, setCell, shuffle, type Kind, type Plant, type RowView } from './plant.js';

export interface CatalogSpec {
  name: string;
  path: string;
  bind?: Record<string, string>;
  /** Rows (1-based) that already carry known errors (a sample catalog's ground truth): never counted as untouched. */
  knownRows?: readonly number[];
  /** Only the first N rows (for a quick test). */
  maxRows?: number;
  /** Real catalog (false alarms counted toward the targets) or a sample. */
  real: boolean;
}

export interface EvaluateOptions {
  seed: number;
  rounds: number;
  /** Share of the catalog's rows planted with each kind per round (at least 2 rows, at most `maxPerKind`). */
  fraction: number;
  maxPerKind: number;
  selection?: RuleSelection;
  /** Keep the planted rows that were missed, with the findings they got (for study, not for the table). */
  keepMisses?: boolean;
}

export interface Miss {
  kind: string;
  row: number;
  plant: Plant;
  judgeable: boolean;
  findings: { rule: string; severity: string; message: string }[];
}

export const DEFAULT_OPTIONS: EvaluateOptions = { seed: 20260108, rounds: 4, fraction: 0.004, maxPerKind: 30 };

/** Counts for one kind, summed over rounds (and catalogs, when pooled). */
export interface KindTally {
  planted: number;
  recalled: number;
  /** Rows that could judge the plant (decimal shifts: the row pins the cell; log/linear: a slip of 3 dex or more). */
  judgeable: number;
  judgeableRecalled: number;
  /** Decimal shifts: rows whose relations pin the cell, whether or not the slip leaves them beyond fireSigma. */
  pinned: number;
  pinnedRecalled: number;
  /** Row findings at planted rows, and those naming the planted cause (or linked to it as their cause). */
  findings: number;
  findingsRight: number;
  /** Planted rows with an error-level finding of any rule. */
  withError: number;
}

export interface CatalogResult {
  name: string;
  real: boolean;
  rows: number;
  /** Row-rounds left untouched, and those with an error / a warning or error. */
  untouched: number;
  untouchedWithError: number;
  untouchedWithWarning: number;
  /** Error- and warning-level findings on untouched rows, by rule. */
  untouchedByRule: Record<string, number>;
  kinds: Record<string, KindTally>;
  /** Details of the mass-luminosity rule on the last round (the fit, when the catalog relation runs). */
  massLuminosity: Record<string, unknown> | null;
  misses?: Miss[];
  /** With keepMisses: the error and warning findings on untouched rows. */
  alarms?: { round: number; row: number; rule: string; severity: string; message: string }[];
}

const emptyTally = (): KindTally => ({ planted: 0, recalled: 0, judgeable: 0, judgeableRecalled: 0, pinned: 0, pinnedRecalled: 0, findings: 0, findingsRight: 0, withError: 0 });

interface Loaded {
  raws: RawBatch[];
  binding: Binding;
  batches: Batch[];
  rows: number;
}

/** Reads a catalog the way `starsieve check` does and binds it from its first batch. */
async function load(spec: CatalogSpec): Promise<Loaded> {
  const reader = await openCatalog(spec.path, {});
  const raws: RawBatch[] = [];
  try {
    let left = spec.maxRows ?? Infinity;
    for await (const b of reader.batches()) {
      if (left <= 0) break;
      raws.push(b.length <= left ? b : truncate(b, left));
      left -= b.length;
    }
  } finally {
    await reader.close();
  }
  const bind: BindOptions = { bind: spec.bind ?? {}, units: {} };
  const binding = bindColumns(reader.columns, raws[0] ?? null, bind);
  const batches = raws.map((r) => toBatch(r, binding, 0));
  return { raws, binding, batches, rows: raws.reduce((a, b) => a + b.length, 0) };
}

function truncate(b: RawBatch, n: number): RawBatch {
  const columns = b.columns.map((c) => {
    if (c.kind === 'text') return { kind: 'text' as const, values: c.values.slice(0, n) };
    if (c.kind === 'number') return { kind: 'number' as const, values: c.values.slice(0, n), nulls: c.nulls ? c.nulls.slice(0, n) : null };
    const keep = c.oddIndex.map((i, k) => [i, k]).filter(([i]) => i < n);
    return { kind: 'scanned' as const, values: c.values.slice(0, n), oddIndex: keep.map(([i]) => i), oddText: keep.map(([, k]) => c.oddText[k]) };
  });
  return { length: n, firstRow: b.firstRow, lines: b.lines ? b.lines.slice(0, n) : null, columns, malformed: b.malformed.filter((m) => m.index < n) };
}

/** Runs the selected rules over raw batches as runInputs does, with the first pass where a rule asks for one. */
export function lint(raws: readonly RawBatch[], binding: Binding, selection: RuleSelection): { findings: Finding[]; reports: RuleReport[] } {
  const rules = selectRules(ALL_RULES, selection);
  const bound = new Map<Quantity, { column: string; unit: string }>();
  for (const b of binding.columns) bound.set(b.quantity, { column: b.column, unit: b.unit });
  const pre = new PrepassRun(rules, selection, bound);
  let states;
  if (!pre.idle) {
    for (const r of raws) pre.observe(toBatch(r, binding, 0));
    states = mergePrepassStates(rules, [pre.states()]);
  }
  const findings: Finding[] = [];
  const run = new InputRun(rules, selection, bound, { push: (f) => findings.push(f) }, undefined, states);
  for (const r of raws) run.processBatch(toBatch(r, binding, 0));
  const reports = run.finish();
  return { findings, reports };
}

const CELL_OF: Partial<Record<NumericQuantity, RowCell>> = { mass: RowCell.Mass, luminosity: RowCell.Luminosity, radius: RowCell.Radius, teff: RowCell.Teff };

const READINGS_OF: Partial<Record<NumericQuantity, readonly UnitReading[]>> = { mass: MASS_READINGS, luminosity: LUMINOSITY_READINGS };

/**
 * Whether the planted row has the values to judge a slipped decimal point in `q` (rr holds the
 * planted row, errors as planted: a slip leaves the error cell as it was): the relations the row
 * has pin a wrong value on this cell rather than a neighbour, the original value mends them within
 * 3 sigma (decimal-shift's acceptSigma: the row was consistent before the slip), no other unit of
 * the cell mends them nearly as well (within 0.5 sigma; then the row cannot tell a unit slip from a
 * shift, as with 0.1 M_sun read as log M = 0.1, that is 1.26 M_sun), and the row as planted misses
 * them by more than 5 sigma (decimal-shift's fireSigma). `pinned`: all but the last.
 */
function canJudgeShift(rr: RowRelations, q: NumericQuantity, raw: number, original: number, declared: string): 'no' | 'pinned' | 'yes' {
  const cell = CELL_OF[q];
  if (cell === undefined) return 'no';
  const bits = rr.available();
  if (!bits || !rr.pins(cell, bits, 3)) return 'no';
  const mended = rr.worstZWith(cell, Math.log10(original), bits);
  if (!(mended <= 3)) return 'no';
  for (const r of READINGS_OF[q] ?? []) {
    if (r.unit === declared) continue;
    const lg = readingLog(r, raw);
    if (Number.isFinite(lg) && rr.worstZWith(cell, lg, bits) <= Math.min(3, mended + 0.5)) return 'no';
  }
  // The slip must also move the row beyond fireSigma given its stated errors: a slip by a factor
  // of ten down leaves the error cell as it was, ten times larger relative to the value.
  return rr.worstZ(bits) > 5 ? 'yes' : 'pinned';
}

/** Evaluates one catalog; deterministic for a given seed. */
export async function evaluateCatalog(spec: CatalogSpec, opts: EvaluateOptions = DEFAULT_OPTIONS): Promise<CatalogResult> {
  const data = await load(spec);
  const { binding, batches, rows } = data;
  const selection = opts.selection ?? {};
  const colOf = new Map<string, { index: number; unit: string; column: string }>();
  for (const b of binding.columns) colOf.set(b.quantity, { index: b.columnIndex, unit: b.unit, column: b.column });
  const columnName = (q: NumericQuantity) => colOf.get(q)?.column ?? '';
  const kinds = KINDS.filter((k) => k.applies((q) => (colOf.has(q) ? (colOf.get(q)!.unit ?? '') : null)));

  // Where each global row (0-based) lives, and what can be said about it unplanted.
  const where: { b: number; i: number }[] = [];
  batches.forEach((batch, b) => {
    for (let i = 0; i < batch.length; i++) where.push({ b, i });
  });
  const rr = new RowRelations();
  const view = (g: number): RowView => {
    const { b, i } = where[g];
    const batch = batches[b];
    return {
      value: (q) => batch.quantities[q]?.value[i] ?? NaN,
      raw: (q) => batch.quantities[q]?.raw[i] ?? NaN,
      unit: (q) => (colOf.has(q) ? colOf.get(q)!.unit : null),
      id: () => batch.text.id?.values[i] ?? null,
    };
  };
  /** Judged on the planted batches (decimal shifts) or on the size of the slip. */
  const judgeable = (kind: Kind, g: number, plant: Plant, planted: RowInputs[]): 'no' | 'pinned' | 'yes' => {
    if (kind.judgedCell) {
      const { b, i } = where[g];
      planted[b].load(rr, i);
      const q = kind.judgedCell;
      return canJudgeShift(rr, q, Number(plant.value), batches[b].quantities[q]!.value[i], colOf.get(q)!.unit);
    }
    if (kind.target?.on === 'large') return plant.sizeDex >= 3 ? 'yes' : 'no';
    return 'yes';
  };

  // A baseline run over the unplanted catalog: sentinel notes it already has are not recall.
  const baseline = lint(data.raws, binding, selection);
  const baselineNotes = sentinelCounts(baseline.findings);

  const known = new Set(spec.knownRows ?? []);
  const result: CatalogResult = { name: spec.name, real: spec.real, rows, untouched: 0, untouchedWithError: 0, untouchedWithWarning: 0, untouchedByRule: {}, kinds: {}, massLuminosity: null };
  for (const k of kinds) result.kinds[k.id] = emptyTally();
  const perKind = Math.max(2, Math.min(opts.maxPerKind, Math.round(rows * opts.fraction)));
  const random = rng(opts.seed);
  const ids = colOf.has('id') ? batches.flatMap((batch) => batch.text.id!.values) : [];

  for (let round = 0; round < opts.rounds; round++) {
    const raws = data.raws.map((r) => ({ ...r, columns: r.columns.map((c) => c) }));
    const touched = new Map<number, { kind: Kind; plant: Plant; judgeable?: 'no' | 'pinned' | 'yes' }>();
    const order = shuffle(
      Array.from({ length: rows }, (_, g) => g).filter((g) => !known.has(g + 1)),
      random,
    );
    const cloned = new Set<string>();
    const write = (g: number, q: NumericQuantity | 'id', v: Plant['value']) => {
      const { b, i } = where[g];
      const index = colOf.get(q)!.index;
      const key = `${b}:${index}`;
      if (!cloned.has(key)) {
        raws[b].columns[index] = cloneColumn(raws[b].columns[index]);
        cloned.add(key);
      }
      setCell(raws[b].columns[index], i, v);
    };
    for (const kind of kinds) {
      let n = 0;
      // Walk the shuffled rows; each row carries at most one plant per round.
      for (const g of order) {
        if (n >= perKind) break;
        if (touched.has(g)) continue;
        let plant: Plant | null;
        if (kind.id === 'duplicate-id') {
          const own = ids[g];
          // Copy an earlier row's identifier, one that differs from this row's.
          const earlier = g > 0 ? Math.floor(random() * g) : -1;
          const other = earlier >= 0 ? ids[earlier] : null;
          plant = own && other && other !== own && !touched.has(earlier) ? { q: 'id', value: getCell(data.raws[where[earlier].b].columns[colOf.get('id')!.index], where[earlier].i), sizeDex: Infinity } : null;
        } else plant = kind.plant(view(g), random);
        if (!plant) continue;
        write(g, plant.q, plant.value);
        if (plant.also) write(g, plant.also.q, plant.also.value);
        touched.set(g, { kind, plant });
        n++;
      }
    }

    const plantedInputs = raws.map((r) => {
      const batch = toBatch(r, binding, 0);
      return new RowInputs(batch, starClasses(batch));
    });
    for (const [g, t] of touched) t.judgeable = judgeable(t.kind, g, t.plant, plantedInputs);
    const { findings, reports } = lint(raws, binding, selection);
    const byRow = new Map<number, Finding[]>();
    for (const f of findings) {
      if (f.scope !== 'row' || f.row === null) continue;
      const list = byRow.get(f.row);
      if (list) list.push(f);
      else byRow.set(f.row, [f]);
    }
    const notes = sentinelCounts(findings);
    const sentinelByColumn = new Map<string, number>();
    for (const [g, t] of touched) {
      const tally = result.kinds[t.kind.id];
      tally.planted++;
      const judged = t.judgeable === 'yes';
      if (judged) tally.judgeable++;
      if (t.judgeable !== 'no') tally.pinned++;
      const here = byRow.get(g + 1) ?? [];
      let hit = here.some((f) => t.kind.rules.includes(f.rule) && t.kind.names(f, columnName));
      if (here.some((f) => f.severity === 'error')) tally.withError++;
      if (t.plant.note) {
        const c = columnName(t.plant.note);
        sentinelByColumn.set(c, (sentinelByColumn.get(c) ?? 0) + 1);
        hit = false;
      }
      if (hit) {
        tally.recalled++;
        if (judged) tally.judgeableRecalled++;
        if (t.judgeable !== 'no') tally.pinnedRecalled++;
      } else if (opts.keepMisses && (!t.plant.note || here.length > 0)) {
        (result.misses ??= []).push({ kind: t.kind.id, row: g + 1, plant: t.plant, judgeable: judged, findings: here.map((f) => ({ rule: f.rule, severity: f.severity, message: f.message })) });
      }
      for (const f of here) {
        tally.findings++;
        const root = f.cause === null ? f : (here.find((x) => x.rule === f.cause) ?? f);
        if (t.kind.names(root, columnName)) tally.findingsRight++;
      }
    }
    // Sentinels are reported per column: recall is the growth of each column's count, capped.
    for (const [column, planted] of sentinelByColumn) {
      const found = Math.max(0, Math.min(planted, (notes.get(column) ?? 0) - (baselineNotes.get(column) ?? 0)));
      const tally = result.kinds.sentinel;
      tally.recalled += found;
      tally.judgeableRecalled += found;
      tally.pinnedRecalled += found;
    }
    for (let g = 0; g < rows; g++) {
      if (touched.has(g) || known.has(g + 1)) continue;
      result.untouched++;
      const here = byRow.get(g + 1);
      if (!here) continue;
      if (here.some((f) => f.severity === 'error')) result.untouchedWithError++;
      if (here.some((f) => f.severity === 'error' || f.severity === 'warning')) result.untouchedWithWarning++;
      for (const f of here) {
        if (f.severity === 'note') continue;
        result.untouchedByRule[f.rule] = (result.untouchedByRule[f.rule] ?? 0) + 1;
        if (opts.keepMisses) (result.alarms ??= []).push({ round, row: g + 1, rule: f.rule, severity: f.severity, message: f.message });
      }
    }
    result.massLuminosity = reports.find((r) => r.id === 'mass-luminosity-outlier')?.details ?? null;
  }
  return result;
}

function sentinelCounts(findings: readonly Finding[]): Map<string, number> {
  const out = new Map<string, number>();
  for (const f of findings) {
    if (f.rule !== 'sentinel-value' || f.scope !== 'column') continue;
    for (const c of f.columns) out.set(c, (out.get(c) ?? 0) + Number(f.values.cells ?? 0));
  }
  return out;
}

/** Sums the tallies of several catalogs. */
export function pool(results: readonly CatalogResult[]): Record<string, KindTally> {
  const out: Record<string, KindTally> = {};
  for (const r of results) {
    for (const [k, t] of Object.entries(r.kinds)) {
      const o = (out[k] ??= emptyTally());
      for (const key of Object.keys(t) as (keyof KindTally)[]) o[key] += t[key];
    }
  }
  return out;
}

const pct = (a: number, b: number, digits = 1) => (b > 0 ? `${((100 * a) / b).toFixed(digits)} %` : '-');

/** The table of one pool of catalogs, per kind, as Markdown. */
export function kindTable(tallies: Record<string, KindTally>): string {
  const lines = [
    '| kind | planted | recall | rows that can judge it | recall there | row gets an error | findings naming the cause | target |',
    '| --- | ---: | ---: | ---: | ---: | ---: | ---: | --- |',
  ];
  for (const kind of KINDS) {
    const t = tallies[kind.id];
    if (!t || t.planted === 0) continue;
    const target = kind.target;
    const on = target?.on === 'judgeable' ? 'judgeable rows' : target?.on === 'large' ? 'slips of 3 dex or more' : 'all rows';
    const reached = target ? (target.on === 'all' ? t.recalled / t.planted : t.judgeableRecalled / Math.max(1, t.judgeable)) : NaN;
    const subset = kind.judgedCell !== undefined || target?.on === 'large';
    const targetText = target ? `>= ${(target.recall * 100).toFixed(0)} % on ${on}: ${reached >= target.recall ? 'met' : 'missed'}` : '-';
    lines.push(
      `| ${kind.id} (${kind.label}) | ${t.planted} | ${pct(t.recalled, t.planted)} | ${subset ? `${t.judgeable}${kind.judgedCell ? ` (pinned: ${t.pinned}, recall ${pct(t.pinnedRecalled, t.pinned)})` : ''}` : 'all'} | ${subset ? pct(t.judgeableRecalled, t.judgeable) : '-'} | ${kind.perColumn ? '-' : pct(t.withError, t.planted)} | ${kind.perColumn ? 'one note per column' : `${pct(t.findingsRight, t.findings)} of ${t.findings}`} | ${targetText} |`,
    );
  }
  return lines.join('\n');
}

/** False alarms per catalog, as Markdown. */
export function alarmTable(results: readonly CatalogResult[]): string {
  const lines = ['| catalog | rows | untouched row-rounds | with an error | with a warning or error | rules behind them (findings) |', '| --- | ---: | ---: | ---: | ---: | --- |'];
  let u = 0;
  let e = 0;
  let w = 0;
  for (const r of results) {
    const top = Object.entries(r.untouchedByRule)
      .sort((a, b) => b[1] - a[1] || a[0].localeCompare(b[0]))
      .slice(0, 3)
      .map(([rule, n]) => `${rule} ${n}`)
      .join(', ');
    lines.push(`| ${r.name} | ${r.rows} | ${r.untouched} | ${pct(r.untouchedWithError, r.untouched, 2)} | ${pct(r.untouchedWithWarning, r.untouched, 2)} | ${top || '-'} |`);
    u += r.untouched;
    e += r.untouchedWithError;
    w += r.untouchedWithWarning;
  }
  if (results.length > 1) lines.push(`| all | ${results.reduce((a, r) => a + r.rows, 0)} | ${u} | ${pct(e, u, 2)} | ${pct(w, u, 2)} | |`);
  return lines.join('\n');
}

/** Ground-truth rows of a sample catalog (its `.truth.json`), which are not untouched. */
export function truthRows(path: string): number[] {
  const truth = JSON.parse(readFileSync(path, 'utf8')) as { planted: { row: number }[] };
  return truth.planted.map((p) => p.row);
}
