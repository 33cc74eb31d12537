/**
 * DuckDB's counts against starsieve's for the shared checks, from starsieve's JSON report, and the
 * rows behind a mismatch.
 */
import { spawnSync } from 'node:child_process';
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { CACHE_DIR } from './catalogs.js';
import { ALIAS_COLUMNS, COUNT_NAMES, ROW_CHECKS, checksSql, type CountName, type RowCheck, type Source } from './duckdb-checks.js';

export type Counts = Partial<Record<CountName, number>>;

interface ReportFinding {
  rule: string;
  severity: string;
  row?: number | null;
  id?: string | null;
  columns?: string[];
  values?: Record<string, unknown>;
  message?: string;
}
interface RuleEntry {
  id: string;
  perInput: { details?: Record<string, unknown> | null; status?: string }[];
}
interface Report {
  summary: { rows: number; byRule: Record<string, Record<string, number>> };
  rules: RuleEntry[];
  findings: ReportFinding[];
}

export function readReport(path: string): Report {
  return JSON.parse(readFileSync(path, 'utf8')) as Report;
}

/** The summed `details[name]` of a rule over its inputs. */
function detail(report: Report, rule: string, pick: (d: Record<string, unknown>) => unknown): number | undefined {
  const r = report.rules.find((x) => x.id === rule);
  if (!r) return undefined;
  let sum = 0;
  for (const p of r.perInput) {
    const v = p.details ? pick(p.details) : undefined;
    sum += typeof v === 'number' ? v : 0;
  }
  return sum;
}

/** Catalog column of each value-out-of-range quantity the SQL judges. */
const RANGE_COLUMN: Readonly<Record<string, string>> = {
  range_luminosity: 'lum_Lsun',
  range_distance: 'dist_pc',
  range_parallax: 'parallax_mas',
  range_feh: 'feh',
  range_mbol: 'mbol',
};
const RANGE_QUANTITY: Readonly<Record<string, string>> = {
  range_luminosity: 'luminosity',
  range_distance: 'distance',
  range_parallax: 'parallax',
  range_feh: 'feh',
  range_mbol: 'mbol',
};

/**
 * What starsieve's report says for each count: sentinel-value's `valueCells` and
 * `uncertaintyCells`; eddington-limit's findings (errors and warnings, and errors alone: an error is
 * a star above the X = 0 limit); value-out-of-range's `rowsOutOfRangeByQuantity` for the quantities
 * the SQL judges; duplicate-id's `rowsRepeatingAnId`.
 */
export function starsieveCounts(report: Report): Counts {
  const edd = report.summary.byRule['eddington-limit'];
  const out: Counts = {
    rows: report.summary.rows,
    sentinel_value_cells: detail(report, 'sentinel-value', (d) => d.valueCells),
    sentinel_error_cells: detail(report, 'sentinel-value', (d) => d.uncertaintyCells),
    eddington_flagged: edd ? (edd.error ?? 0) + (edd.warning ?? 0) : undefined,
    eddington_errors: edd ? (edd.error ?? 0) : undefined,
    duplicate_id_repeats: detail(report, 'duplicate-id', (d) => d.rowsRepeatingAnId),
  };
  for (const [name, q] of Object.entries(RANGE_QUANTITY)) {
    out[name as CountName] = detail(report, 'value-out-of-range', (d) => (d.rowsOutOfRangeByQuantity as Record<string, number> | undefined)?.[q] ?? 0);
  }
  return out;
}

export interface CountRow {
  name: CountName;
  values: Record<string, number | undefined>;
  match: boolean;
}

/** One row per count: every source's value and whether all that are present agree. */
export function compareCounts(sources: Record<string, Counts>): CountRow[] {
  return COUNT_NAMES.map((name) => {
    const values: Record<string, number | undefined> = {};
    for (const [src, c] of Object.entries(sources)) values[src] = c[name];
    const present = Object.values(values).filter((v): v is number => v !== undefined);
    return { name, values, match: present.length < 2 || present.every((v) => v === present[0]) };
  });
}

/** Row ids starsieve flagged for one row-level check, from the findings list. */
function starsieveFlagged(report: Report, check: RowCheck): string[] {
  const f = report.findings;
  if (check === 'eddington_flagged') return f.filter((x) => x.rule === 'eddington-limit').map((x) => String(x.id));
  if (check === 'eddington_errors') return f.filter((x) => x.rule === 'eddington-limit' && x.severity === 'error').map((x) => String(x.id));
  const col = RANGE_COLUMN[check];
  return f.filter((x) => x.rule === 'value-out-of-range' && (x.columns ?? []).includes(col)).map((x) => String(x.id));
}

export interface Disagreement {
  check: RowCheck;
  source: Source;
  onlyDuckdb: Record<string, unknown>[];
  onlyStarsieve: { id: string; row: number | null; message: string }[];
}

/** Multiset difference a - b of ids. */
function minus(a: readonly string[], b: readonly string[]): string[] {
  const left = new Map<string, number>();
  for (const x of b) left.set(x, (left.get(x) ?? 0) + 1);
  const out: string[] = [];
  for (const x of a) {
    const n = left.get(x) ?? 0;
    if (n > 0) left.set(x, n - 1);
    else out.push(x);
  }
  return out;
}

/**
 * For a row-level check whose counts differ, the rows only one side flags: DuckDB's with the
 * cells as it read them, starsieve's with its message. Rows are matched by star_id.
 */
export function traceRowCheck(check: RowCheck, source: Source, file: string, report: Report, peersDir: string, limit = 5): Disagreement {
  const sqlFile = join(CACHE_DIR, `flagged-${check}-${source}.sql`);
  writeFileSync(sqlFile, checksSql(source, file).flagged(check));
  const r = spawnSync(process.execPath, [join(peersDir, 'duckdb-run.mjs'), sqlFile, '--all'], { encoding: 'utf8', maxBuffer: 1 << 28 });
  if (r.status !== 0) throw new Error(`DuckDB listing for ${check} failed: ${r.stderr}`);
  const rows = JSON.parse(r.stdout) as Record<string, unknown>[];
  const duckIds = rows.map((x) => String(x.id));
  const ssIds = starsieveFlagged(report, check);
  const onlyD = new Set(minus(duckIds, ssIds));
  const onlyS = minus(ssIds, duckIds);
  const named = (row: Record<string, unknown>) => Object.fromEntries(Object.entries(row).map(([k, v]) => [ALIAS_COLUMNS[k] ?? k, v]));
  return {
    check,
    source,
    onlyDuckdb: rows.filter((x) => onlyD.has(String(x.id))).slice(0, limit).map(named),
    onlyStarsieve: onlyS.slice(0, limit).map((id) => {
      const f = report.findings.find((x) => String(x.id) === id && x.rule === (check.startsWith('eddington') ? 'eddington-limit' : 'value-out-of-range'));
      return { id, row: f?.row ?? null, message: f?.message ?? '' };
    }),
  };
}

/** The rule behind each count. */
export const COUNT_RULE: Readonly<Record<CountName, string>> = {
  rows: '',
  sentinel_value_cells: 'sentinel-value',
  sentinel_error_cells: 'sentinel-value',
  eddington_flagged: 'eddington-limit',
  eddington_errors: 'eddington-limit',
  range_luminosity: 'value-out-of-range',
  range_distance: 'value-out-of-range',
  range_parallax: 'value-out-of-range',
  range_feh: 'value-out-of-range',
  range_mbol: 'value-out-of-range',
  duplicate_id_repeats: 'duplicate-id',
};

/** How many rows the rule judged and why it skipped the others, as the report tells. */
export function ruleAccounting(report: Report, rule: string): string {
  const r = report.rules.find((x) => x.id === rule);
  if (!r) return `${rule} did not run`;
  return r.perInput
    .map((p) => {
      const q = p as { checked?: number; skipped?: Record<string, number> };
      const skipped = Object.entries(q.skipped ?? {}).map(([why, n]) => `${n} ${why}`);
      return `${rule} checked ${q.checked ?? '?'} rows${skipped.length ? `, skipped ${skipped.join(', ')}` : ''}`;
    })
    .join('; ');
}

export function isRowCheck(name: string): name is RowCheck {
  return (ROW_CHECKS as readonly string[]).includes(name);
}
