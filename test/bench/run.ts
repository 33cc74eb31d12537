/**
 * The benchmark: `starsieve check` on catalogs from the sample generator, side by side with the
 * tools a curator might use instead, each run as its own child process several times (median).
 *
 *   npm run bench                                   # 1M rows, everything, 3 rounds
 *   npm run bench -- --rows 100000 --repeat 1       # a quick run
 *   npm run bench -- --ten-million                  # 10M rows (same as --rows 10000000)
 *   npm run bench -- --only csv,duckdb --profile    # some measurements, and a CPU profile
 *
 * Never part of `npm test`. Results go to test-output/bench.json; the README section "Performance" shows a run.
 */
import { cpus, loadavg } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { CACHE_DIR, ensureCatalog, type BenchCatalog } from './catalogs.js';
import { COUNT_RULE, compareCounts, isRowCheck, readReport, ruleAccounting, starsieveCounts, traceRowCheck, type CountRow, type Counts, type Disagreement } from './compare.js';
import { HEADLINE_RULES, type Source } from './duckdb-checks.js';
import { mergeRun, readHistory, rssAt, writeHistory } from './history.js';
import { measureAll, requireGnuTime, type Failure, type Measurement } from './measure.js';
import { KEYS, REPO, parseOnly, reportPath, specFor, type Key } from './peers.js';
import { profileCheck, type ProfileResult } from './profile.js';
import { countTable, disagreementText, measurementTable, profileTable, ratioTable, ratios, targetTable, targets, type Ratios, type Target } from './table.js';

const USAGE = `usage: npm run bench -- [options]
  --rows N         catalog rows (default 1000000)
  --ten-million    10,000,000 rows
  --repeat N       rounds; each measurement's median is reported (default 3)
  --seed N         generator seed (default 7)
  --only LIST      measurements, comma-separated, from
                   ${KEYS.join(', ')};
                   or the groups starsieve, all (the all-rules runs), headline, duckdb, peers
  --budget S       stop adding rounds once another would pass S seconds
                   (default 520 up to 1M rows, none above)
  --profile        also profile one all-rules check of the CSV (node --cpu-prof)`;

interface Options {
  rows: number;
  repeat: number;
  seed: number;
  only: Key[];
  budget: number;
  profile: boolean;
}

function options(argv: string[]): Options {
  const { values } = parseArgs({
    args: argv,
    options: {
      rows: { type: 'string' },
      'ten-million': { type: 'boolean', default: false },
      repeat: { type: 'string', default: '3' },
      seed: { type: 'string', default: '7' },
      only: { type: 'string' },
      budget: { type: 'string' },
      profile: { type: 'boolean', default: false },
      help: { type: 'boolean', short: 'h', default: false },
    },
  });
  if (values.help) {
    process.stdout.write(`${USAGE}\n`);
    process.exit(0);
  }
  const positive = (name: string, text: string) => {
    const n = Number(text);
    if (!Number.isInteger(n) || n < 1) throw new Error(`--${name} needs a positive integer, not ${text}`);
    return n;
  };
  const rows = values['ten-million'] ? 10_000_000 : positive('rows', values.rows ?? '1000000');
  const seed = Number(values.seed);
  if (!Number.isInteger(seed) || seed < 0) throw new Error(`--seed needs a non-negative integer, not ${values.seed}`);
  const budget = values.budget !== undefined ? Number(values.budget) : rows <= 1_000_000 ? 520 : Infinity;
  if (!(budget > 0)) throw new Error(`--budget needs seconds, not ${values.budget}`);
  return { rows, repeat: positive('repeat', values.repeat), seed, only: parseOnly(values.only), budget, profile: values.profile };
}

/** What bench.json records for one run. */
interface RunRecord {
  date: string;
  rows: number;
  seed: number;
  repeat: number;
  rounds: number;
  node: string;
  cpus: number;
  loadAverageAtStart: number[];
  files: { csv: string; arrow: string; parquet: string; bytes: BenchCatalog['bytes'] };
  headlineRules: readonly string[];
  measurements: Omit<Measurement, 'stdout'>[];
  failures: Failure[];
  ratios: Ratios;
  targets: Target[];
  counts: { sources: string[]; rows: CountRow[]; allRules: Record<string, Counts>; disagreements: Disagreement[]; accounting: string[] } | null;
  profile: ProfileResult | null;
  wallSeconds: number;
}

const log = (s: string) => process.stdout.write(`${s}\n`);

/** Count comparison: DuckDB's counts (printed by its child) against the headline-rules reports. */
function countComparison(ms: readonly Measurement[], cat: BenchCatalog): RunRecord['counts'] {
  const by = new Map(ms.map((m) => [m.key, m]));
  const sources: Record<string, Counts> = {};
  if (by.has('duckdb-csv')) sources['DuckDB CSV'] = JSON.parse(by.get('duckdb-csv')!.stdout) as Counts;
  if (by.has('duckdb-parquet')) sources['DuckDB Parquet'] = JSON.parse(by.get('duckdb-parquet')!.stdout) as Counts;
  const reports = new Map<Key, ReturnType<typeof readReport>>();
  for (const [key, name] of [
    ['csv-headline', 'starsieve CSV'],
    ['arrow-headline', 'starsieve Arrow'],
    ['parquet-headline', 'starsieve Parquet'],
  ] as const) {
    if (!by.has(key)) continue;
    const r = readReport(reportPath(key));
    reports.set(key, r);
    sources[name] = starsieveCounts(r);
  }
  const allRules: Record<string, Counts> = {};
  for (const [key, name] of [
    ['csv', 'all rules CSV'],
    ['arrow', 'all rules Arrow'],
    ['parquet', 'all rules Parquet'],
  ] as const) {
    if (by.has(key)) allRules[name] = starsieveCounts(readReport(reportPath(key)));
  }
  const names = Object.keys(sources);
  if (!names.some((n) => n.startsWith('DuckDB')) || !names.some((n) => n.startsWith('starsieve'))) return null;
  const rows = compareCounts(sources);
  // For each row-level count that differs, list the rows behind it, DuckDB's source against the
  // starsieve run of the same data (Arrow holds what Parquet holds).
  const pairs: [string, Key, Source][] = [
    ['DuckDB CSV', 'csv-headline', 'csv'],
    ['DuckDB Parquet', 'parquet-headline', 'parquet'],
    ['DuckDB Parquet', 'arrow-headline', 'parquet'],
  ];
  const disagreements: Disagreement[] = [];
  // For every count that differs, how each starsieve run accounted for its rows.
  const accounting: string[] = [];
  for (const row of rows) {
    if (row.match || !COUNT_RULE[row.name]) continue;
    for (const [key, r] of reports) accounting.push(`${key}: ${ruleAccounting(r, COUNT_RULE[row.name])}`);
  }
  for (const row of rows) {
    if (row.match || !isRowCheck(row.name)) continue;
    for (const [duck, key, source] of pairs) {
      const ss = `starsieve ${key.startsWith('csv') ? 'CSV' : key.startsWith('arrow') ? 'Arrow' : 'Parquet'}`;
      const a = row.values[duck];
      const b = row.values[ss];
      if (a === undefined || b === undefined || a === b) continue;
      disagreements.push(traceRowCheck(row.name, source, cat[source], reports.get(key)!, join(import.meta.dirname, 'peers')));
    }
  }
  return { sources: names, rows, allRules, disagreements, accounting: [...new Set(accounting)] };
}

async function main(): Promise<void> {
  const opts = options(process.argv.slice(2));
  requireGnuTime();
  const started = performance.now();
  const load = loadavg();
  log(`starsieve benchmark: ${opts.rows.toLocaleString('en-US')} rows, seed ${opts.seed}, ${opts.repeat} round(s); ${cpus().length} cores, load average ${load.map((x) => x.toFixed(2)).join(' ')}`);
  const cat = await ensureCatalog(opts.rows, opts.seed, log);
  log(`files in ${CACHE_DIR}: CSV ${(cat.bytes.csv / 1e6).toFixed(1)} MB, Arrow ${(cat.bytes.arrow / 1e6).toFixed(1)} MB, Parquet ${(cat.bytes.parquet / 1e6).toFixed(1)} MB`);

  const specs = opts.only.map((k) => specFor(k, cat));
  const { measurements, failures, rounds } = measureAll(specs, opts.repeat, REPO, opts.budget, log);

  const historyPath = join(REPO, 'test-output/bench.json');
  const history = readHistory<RunRecord>(historyPath);
  const date = new Date().toISOString();
  const rssNow = Object.fromEntries(measurements.filter((m) => m.kind === 'starsieve').map((m) => [m.key, m.peakRssMb]));
  const withNow = (rows: number) => (rows === opts.rows ? { ...(rssAt(history, rows) ?? {}), ...rssNow } : rssAt(history, rows));
  const r = ratios(measurements);
  const t = targets(measurements, r, { oneMillion: withNow(1_000_000), tenMillion: withNow(10_000_000) });
  const counts = countComparison(measurements, cat);

  let profile: ProfileResult | null = null;
  if (opts.profile) {
    log('profiling one all-rules check of the CSV ...');
    profile = profileCheck(REPO, cat.csv, join(CACHE_DIR, 'report-profile.json'));
  }

  const record: RunRecord = {
    date,
    rows: opts.rows,
    seed: opts.seed,
    repeat: opts.repeat,
    rounds,
    node: process.version,
    cpus: cpus().length,
    loadAverageAtStart: load,
    files: { csv: cat.csv, arrow: cat.arrow, parquet: cat.parquet, bytes: cat.bytes },
    headlineRules: HEADLINE_RULES,
    measurements: measurements.map(({ stdout: _stdout, ...m }) => m),
    failures,
    ratios: r,
    targets: t,
    counts,
    profile,
    wallSeconds: (performance.now() - started) / 1000,
  };
  writeHistory(historyPath, mergeRun(history, opts.rows, record, rssNow, date));

  log(`\n${opts.rows.toLocaleString('en-US')} rows, median of ${rounds} round(s); machine shared, so timings are noisy\n`);
  log(measurementTable(measurements));
  for (const f of failures) log(`FAILED: ${f.label}: ${f.message.split('\n')[0]}`);
  const rt = ratioTable(measurements, r);
  if (rt) log(`\n${rt}`);
  log(`\n${targetTable(t)}`);
  if (counts) {
    log(`\nShared checks, DuckDB SQL against starsieve --rules ${HEADLINE_RULES.join(',')}:\n`);
    log(countTable(counts.rows, counts.sources));
    const bad = counts.rows.filter((x) => !x.match);
    log(bad.length ? `\nMISMATCH in ${bad.map((x) => x.name).join(', ')}` : '\nAll shared counts agree.');
    for (const a of counts.accounting) log(`  ${a}`);
    for (const d of counts.disagreements) log(disagreementText(d));
    const all = Object.keys(counts.allRules);
    if (all.length) {
      log(`\nThe same counts from the all-rules runs (screening rules withhold cells they explain, so the judging counts are lower; not compared):\n`);
      log(countTable(compareCounts(counts.allRules), all).replace(/\s+(yes|NO)$/gm, ''));
    }
  }
  if (profile) {
    log(`\nProfile of one all-rules CSV check: ${profile.seconds.toFixed(1)} s wall, ${(profile.totalMs / 1000).toFixed(1)} s busy over ${profile.files.length} thread profile(s) in ${profile.dir}; top self time (idle left out):\n`);
    log(profileTable(profile));
    if (profile.top.some((f) => f.where.startsWith('dist/'))) log('(bin/starsieve.js ran the dist/ bundle: locations are lines of the bundle; STARSIEVE_FROM_SOURCE=1 names the sources)');
  }
  log(`\nwrote test-output/bench.json (${record.wallSeconds.toFixed(0)} s in all)`);
}

main().catch((e: unknown) => {
  process.stderr.write(`bench: ${e instanceof Error ? e.message : String(e)}\n`);
  process.exit(2);
});
