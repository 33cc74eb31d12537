/**
 * What is measured: starsieve on each format, with all default rules and with only the headline
 * rules, and the peers it is compared with. Each is a Node command line, run as a child process.
 */
import { writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import type { BenchCatalog } from './catalogs.js';
import { CACHE_DIR } from './catalogs.js';
import { HEADLINE_RULES, checksSql, type Source } from './duckdb-checks.js';
import type { Spec } from './measure.js';

export const REPO = resolve(import.meta.dirname, '../..');
const BIN = join(REPO, 'bin/starsieve.js');
const PEERS = join(import.meta.dirname, 'peers');

/** Every measurement key, in the order they run and print. */
export const KEYS = [
  'csv',
  'arrow',
  'parquet',
  'csv-headline',
  'arrow-headline',
  'parquet-headline',
  'duckdb-csv',
  'duckdb-parquet',
  'papaparse',
  'floor',
] as const;
export type Key = (typeof KEYS)[number];

/** Names `--only` takes for several keys at once. */
export const GROUPS: Readonly<Record<string, readonly Key[]>> = {
  starsieve: ['csv', 'arrow', 'parquet', 'csv-headline', 'arrow-headline', 'parquet-headline'],
  all: ['csv', 'arrow', 'parquet'],
  headline: ['csv-headline', 'arrow-headline', 'parquet-headline'],
  duckdb: ['duckdb-csv', 'duckdb-parquet'],
  peers: ['duckdb-csv', 'duckdb-parquet', 'papaparse', 'floor'],
};

export function reportPath(key: Key): string {
  return join(CACHE_DIR, `report-${key}.json`);
}

/** Where the SQL for a DuckDB measurement is written, for the child to read. */
export function sqlPath(rows: number, source: Source): string {
  return join(CACHE_DIR, `checks-r${rows}-${source}.sql`);
}

type Format = 'csv' | 'arrow' | 'parquet';

export function specFor(key: Key, cat: BenchCatalog): Spec {
  const file = (f: Format) => cat[f];
  const base = (f: Format) => ({ key, format: f, file: file(f), bytes: cat.bytes[f], rows: cat.rows });
  const check = (f: Format, headline: boolean): Spec => ({
    ...base(f),
    kind: 'starsieve',
    label: `starsieve ${headline ? 'headline rules' : 'all rules'}, ${f === 'csv' ? 'CSV' : f === 'arrow' ? 'Arrow' : 'Parquet'}`,
    args: [BIN, 'check', file(f), '--quiet', '--fail-on', 'never', '--report', reportPath(key), ...(headline ? ['--rules', HEADLINE_RULES.join(',')] : [])],
  });
  const duck = (source: Source): Spec => {
    const sqlFile = sqlPath(cat.rows, source);
    writeFileSync(sqlFile, checksSql(source, cat[source]).counts);
    return { ...base(source), kind: 'peer', label: `DuckDB SQL checks, ${source === 'csv' ? 'CSV' : 'Parquet'}`, args: [join(PEERS, 'duckdb-run.mjs'), sqlFile] };
  };
  switch (key) {
    case 'csv':
    case 'arrow':
    case 'parquet':
      return check(key, false);
    case 'csv-headline':
      return check('csv', true);
    case 'arrow-headline':
      return check('arrow', true);
    case 'parquet-headline':
      return check('parquet', true);
    case 'duckdb-csv':
      return duck('csv');
    case 'duckdb-parquet':
      return duck('parquet');
    case 'papaparse':
      return { ...base('csv'), kind: 'peer', label: 'papaparse parse only, CSV', args: [join(PEERS, 'papaparse-parse.mjs'), cat.csv] };
    case 'floor':
      return { ...base('csv'), kind: 'peer', label: 'Node read of the CSV (floor)', args: [join(PEERS, 'read-floor.mjs'), cat.csv] };
  }
}

/** Keys from `--only`: single keys and group names, comma-separated, in the canonical order. */
export function parseOnly(text: string | undefined): Key[] {
  if (!text) return [...KEYS];
  const picked = new Set<Key>();
  for (const word of text.split(',').map((s) => s.trim()).filter(Boolean)) {
    if ((KEYS as readonly string[]).includes(word)) picked.add(word as Key);
    else if (GROUPS[word]) for (const k of GROUPS[word]) picked.add(k);
    else throw new Error(`--only: unknown measurement \`${word}\` (known: ${KEYS.join(', ')}; groups: ${Object.keys(GROUPS).join(', ')})`);
  }
  return KEYS.filter((k) => picked.has(k));
}
