/**
 * `npm run evaluate`: plants errors into the real catalogs of ../shared/reference-data and the
 * sample catalog, lints them, and prints recall, cause and false-alarm tables (Markdown). The table
 * depends only on the seed and the options, so a rerun reproduces it.
 *
 *   npm run evaluate -- [--seed N] [--rounds N] [--relation catalog] [--param RULE.NAME=VALUE] [--json]
 */
import { existsSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { DEFAULT_OPTIONS, alarmTable, evaluateCatalog, kindTable, pool, truthRows, type CatalogResult, type CatalogSpec, type EvaluateOptions } from './evaluate.js';

const REPO = resolve(import.meta.dirname, '../..');
const REFERENCE = resolve(REPO, '../shared/reference-data');

/** The real catalogs (see each folder's PROVENANCE.md) and how they are bound. */
export const REAL_CATALOGS: readonly CatalogSpec[] = [
  { name: 'CARMENES M dwarfs (cif03)', path: 'carmenes-mdwarfs/cif03.full_table.csv', real: true },
  {
    name: 'CARMENES Schweitzer 2019',
    path: 'carmenes-mdwarfs/schweitzer19.csv',
    bind: { MassMR: 'mass', MassMMKs: 'none', MassLogg: 'none', MassP: 'none', Lum: 'luminosity', Lbol: 'none' },
    real: true,
  },
  { name: 'Mann 2015 M dwarfs', path: 'carmenes-mdwarfs/mann15.stars.csv', real: true },
  { name: 'PHL exoplanet hosts', path: 'phl-exoplanet-catalog/phl_exoplanet_catalog.csv', real: true },
  { name: 'NASA PSCompPars 2024', path: 'nasa-exoplanet-archive/PSCompPars_2024-10-15.csv', real: true },
  { name: 'NASA legacy HZ hosts 2019', path: 'nasa-exoplanet-archive/legacy_hz_confirmed_planet_hosts_2019.csv', real: true },
  { name: 'LIFE StarCat4', path: 'life-nearby-stars/LIFE-StarCat4_dec2024.csv', real: true },
  { name: 'sdb 30 pc (VOTable)', path: 'life-nearby-stars/sdb_30pc_09_02_2024.xml', real: true },
  { name: 'MWDD white dwarfs', path: 'mwdd-white-dwarfs/MWDD-export.csv', real: true },
  { name: 'Galactic red supergiants', path: 'massive-luminous-stars/RSG_catalog_4_11_24.csv', real: true },
];

export const SAMPLE: CatalogSpec = {
  name: 'Thistlewood DR1 (sample, its 120 planted rows excluded)',
  path: join(REPO, 'sample-catalogs/thistlewood-dr1.csv'),
  knownRows: truthRows(join(REPO, 'sample-catalogs/thistlewood-dr1.truth.json')),
  real: false,
};

function args(argv: string[]): { opts: EvaluateOptions; json: boolean; relation?: string } {
  const opts: EvaluateOptions = { ...DEFAULT_OPTIONS };
  let json = false;
  let relation: string | undefined;
  for (let k = 0; k < argv.length; k++) {
    const a = argv[k];
    if (a === '--seed') opts.seed = Number(argv[++k]);
    else if (a === '--rounds') opts.rounds = Number(argv[++k]);
    else if (a === '--relation') relation = argv[++k];
    else if (a === '--param') {
      const [key, value] = argv[++k].split('=');
      const dot = key.indexOf('.');
      const params = ((opts.selection ??= {}).params ??= {}) as Record<string, Record<string, string>>;
      (params[key.slice(0, dot)] ??= {})[key.slice(dot + 1)] = value;
    }
    else if (a === '--json') json = true;
    else throw new Error(`unknown option ${a}`);
  }
  if (relation) {
    const params = ((opts.selection ??= {}).params ??= {}) as Record<string, Record<string, string>>;
    (params['mass-luminosity-outlier'] ??= {}).relation = relation;
  }
  return { opts, json, relation };
}

async function main() {
  const { opts, json, relation } = args(process.argv.slice(2));
  if (!existsSync(REFERENCE)) {
    process.stderr.write(`../shared/reference-data is absent: only the sample catalog is evaluated\n`);
  }
  const real: CatalogResult[] = [];
  if (existsSync(REFERENCE)) {
    for (const c of REAL_CATALOGS) real.push(await evaluateCatalog({ ...c, path: join(REFERENCE, c.path) }, opts));
  }
  const sample = await evaluateCatalog(SAMPLE, opts);
  if (json) {
    process.stdout.write(JSON.stringify({ options: opts, real, sample }, null, 1) + '\n');
    return;
  }
  const out: string[] = [];
  out.push(`Seed ${opts.seed}, ${opts.rounds} rounds, ${opts.fraction * 100} % of rows per kind per round (at most ${opts.maxPerKind})${relation ? `, --relation ${relation}` : ''}.`);
  if (real.length) {
    out.push('', '### Real catalogs: planted errors', '', kindTable(pool(real)), '', '### Real catalogs: false alarms on untouched rows', '', alarmTable(real));
  }
  out.push('', '### Sample catalog: planted errors', '', kindTable(sample.kinds), '', alarmTable([sample]));
  process.stdout.write(out.join('\n') + '\n');
}

const isEntry = process.argv[1] && import.meta.url === new URL(`file://${process.argv[1]}`).href;
if (isEntry) {
  main().catch((e) => {
    process.stderr.write(`evaluate: ${(e as Error).stack ?? e}\n`);
    process.exitCode = 2;
  });
}
