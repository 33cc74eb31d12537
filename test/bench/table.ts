/**
 * The printed tables: measurements, ratios to the peers, targets, the count comparison and the
 * profile. Also the ratio and target arithmetic, which bench.json records as printed.
 */
import type { CountRow, Disagreement } from './compare.js';
import type { Measurement } from './measure.js';
import type { ProfileResult } from './profile.js';

const int = (x: number) => Math.round(x).toLocaleString('en-US');

function pad(cells: string[][], rightAligned: (col: number) => boolean): string {
  const widths = cells[0].map((_, c) => Math.max(...cells.map((r) => r[c].length)));
  return cells.map((r) => r.map((s, c) => (rightAligned(c) ? s.padStart(widths[c]) : s.padEnd(widths[c]))).join('  ').trimEnd()).join('\n');
}

export function measurementTable(ms: readonly Measurement[]): string {
  const head = ['measurement', 'median s', 'rows/s', 'MB/s', 'peak RSS MB', 'runs'];
  const rows = ms.map((m) => [m.label, m.seconds.toFixed(2), int(m.rowsPerSecond), m.mbPerSecond.toFixed(1), m.peakRssMb.toFixed(0), String(m.runs.length)]);
  return pad([head, ...rows], (c) => c > 0);
}

export const PEER_KEYS = ['duckdb-csv', 'duckdb-parquet', 'papaparse', 'floor'] as const;
const PEER_TITLE: Readonly<Record<string, string>> = {
  'duckdb-csv': 'vs DuckDB CSV',
  'duckdb-parquet': 'vs DuckDB Parquet',
  papaparse: 'vs papaparse',
  floor: 'vs read floor',
};

/** starsieve's rows/s over the peer's: above 1, starsieve is faster. */
export type Ratios = Record<string, Record<string, number>>;

export function ratios(ms: readonly Measurement[]): Ratios {
  const byKey = new Map(ms.map((m) => [m.key, m]));
  const out: Ratios = {};
  for (const s of ms.filter((m) => m.kind === 'starsieve')) {
    out[s.key] = {};
    for (const p of PEER_KEYS) {
      const peer = byKey.get(p);
      if (peer) out[s.key][p] = s.rowsPerSecond / peer.rowsPerSecond;
    }
  }
  return out;
}

export function ratioTable(ms: readonly Measurement[], r: Ratios): string {
  const peers = PEER_KEYS.filter((p) => ms.some((m) => m.key === p));
  if (peers.length === 0 || Object.keys(r).length === 0) return '';
  const head = ['starsieve rows/s as a multiple of', ...peers.map((p) => PEER_TITLE[p])];
  const rows = ms.filter((m) => r[m.key]).map((m) => [m.label, ...peers.map((p) => `${r[m.key][p].toFixed(2)}x`)]);
  return pad([head, ...rows], (c) => c > 0);
}

export interface Target {
  name: string;
  /** What was measured, as text, and the number judged. */
  measured: string;
  value: number | null;
  goal: string;
  pass: boolean | null;
  /** For a miss: how far off, as text. */
  missBy: string | null;
}

/**
 * The targets. Speed targets compare like with like: the headline-rules runs against
 * DuckDB doing those checks; the floor target uses the all-rules CSV run (what a user runs).
 */
export function targets(ms: readonly Measurement[], r: Ratios, rssAt: { oneMillion?: Record<string, number>; tenMillion?: Record<string, number> }): Target[] {
  const out: Target[] = [];
  const byKey = new Map(ms.map((m) => [m.key, m]));
  const speed = (name: string, key: string, peer: string, goal: number) => {
    const v = r[key]?.[peer];
    out.push({
      name,
      measured: v === undefined ? 'not measured' : `${v.toFixed(2)}x`,
      value: v ?? null,
      goal: `>= ${goal}x`,
      pass: v === undefined ? null : v >= goal,
      missBy: v === undefined || v >= goal ? null : `needs ${(goal / v).toFixed(2)}x faster`,
    });
  };
  speed('CSV, headline rules, vs DuckDB on the CSV', 'csv-headline', 'duckdb-csv', 1.5);
  const csv = byKey.get('csv');
  const floor = byKey.get('floor');
  if (csv && floor) {
    const f = csv.seconds / floor.seconds;
    out.push({ name: 'CSV, all rules, within 3x the read floor', measured: `${f.toFixed(2)}x the floor's time`, value: f, goal: '<= 3x', pass: f <= 3, missBy: f <= 3 ? null : `${(f / 3).toFixed(2)}x too slow` });
  } else out.push({ name: 'CSV, all rules, within 3x the read floor', measured: 'not measured', value: null, goal: '<= 3x', pass: null, missBy: null });
  speed('Arrow, headline rules, vs DuckDB on Parquet', 'arrow-headline', 'duckdb-parquet', 1.5);
  speed('Parquet, headline rules, vs DuckDB on Parquet', 'parquet-headline', 'duckdb-parquet', 1.5);
  const ss = ms.filter((m) => m.kind === 'starsieve');
  if (ss.length) {
    const worst = ss.reduce((a, b) => (b.peakRssMb > a.peakRssMb ? b : a));
    out.push({
      name: 'peak RSS of every starsieve run',
      measured: `${worst.peakRssMb.toFixed(0)} MB (${worst.label})`,
      value: worst.peakRssMb,
      goal: '< 250 MB',
      pass: worst.peakRssMb < 250,
      missBy: worst.peakRssMb < 250 ? null : `${(worst.peakRssMb - 250).toFixed(0)} MB over`,
    });
  }
  const a = rssAt.oneMillion;
  const b = rssAt.tenMillion;
  if (a && b) {
    const shared = Object.keys(a).filter((k) => b[k] !== undefined);
    if (shared.length) {
      const worstKey = shared.reduce((x, y) => (b[y] / a[y] > b[x] / a[x] ? y : x));
      const g = b[worstKey] / a[worstKey];
      out.push({
        name: 'peak RSS at 10M rows within 15% of 1M',
        measured: `${((g - 1) * 100).toFixed(0)}% (${worstKey}: ${a[worstKey].toFixed(0)} -> ${b[worstKey].toFixed(0)} MB)`,
        value: g,
        goal: '<= +15%',
        pass: g <= 1.15,
        missBy: g <= 1.15 ? null : `${((g - 1.15) * 100).toFixed(0)} points over`,
      });
    }
  } else {
    out.push({ name: 'peak RSS at 10M rows within 15% of 1M', measured: 'needs 1M and 10M results in bench.json', value: null, goal: '<= +15%', pass: null, missBy: null });
  }
  return out;
}

export function targetTable(ts: readonly Target[]): string {
  const head = ['target', 'measured', 'goal', 'result'];
  const rows = ts.map((t) => [t.name, t.measured, t.goal, t.pass === null ? 'n/a' : t.pass ? 'pass' : `MISS (${t.missBy})`]);
  return pad([head, ...rows], () => false);
}

export function countTable(rows: readonly CountRow[], sources: readonly string[]): string {
  const head = ['count', ...sources, 'agree'];
  const body = rows.map((r) => [r.name, ...sources.map((s) => (r.values[s] === undefined ? '-' : String(r.values[s]))), r.match ? 'yes' : 'NO']);
  return pad([head, ...body], (c) => c > 0 && c <= sources.length);
}

export function disagreementText(d: Disagreement): string {
  const lines = [`${d.check} on ${d.source}: ${d.onlyDuckdb.length ? '' : 'no '}rows only DuckDB flags${d.onlyDuckdb.length ? ':' : ''}`];
  for (const r of d.onlyDuckdb) lines.push(`  ${JSON.stringify(r)}`);
  lines.push(`  ${d.onlyStarsieve.length ? 'rows only starsieve flags:' : 'no rows only starsieve flags'}`);
  for (const r of d.onlyStarsieve) lines.push(`  row ${r.row} ${r.id}: ${r.message}`);
  return lines.join('\n');
}

export function profileTable(p: ProfileResult): string {
  const head = ['self ms', '%', 'function', 'where'];
  const rows = p.top.map((f) => [f.selfMs.toFixed(0), f.percent.toFixed(1), f.name, f.where]);
  return pad([head, ...rows], (c) => c < 2);
}
