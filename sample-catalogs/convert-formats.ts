/**
 * Writes a CSV catalog again in the astronomy formats, with units and UCDs in the metadata, so
 * the same stars can be linted from FITS, VOTable, ECSV, Parquet and gzip. The output depends
 * only on the CSV (no dates, no host names), so the committed demo files can be checked byte for
 * byte.
 *
 *   npx tsx sample-catalogs/convert-formats.ts                 # thistlewood-dr1.fits and .vot
 *   npx tsx sample-catalogs/convert-formats.ts --in /tmp/tw1m.csv --out /tmp/tw1m \
 *       --formats fits,vot,vot2,ecsv,parquet,csv.gz
 */
import { closeSync, openSync, readFileSync, writeSync } from 'node:fs';
import { basename, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { gzipSync } from 'node:zlib';
import Papa from 'papaparse';
import { ecsv, fitsBintable, fitsCard, fitsPrimary, parquet, votable, type TableColumn } from '../test/helpers/table-writers.js';

/** What the Thistlewood columns mean, as FITS/VOTable metadata (IVOA UCD1+ words, VOUnits). */
const DEMO_META: Readonly<Record<string, { unit?: string; ucd: string; description: string }>> = {
  star_id: { ucd: 'meta.id;meta.main', description: 'Thistlewood Census identifier' },
  mass_Msun: { unit: 'solMass', ucd: 'phys.mass', description: 'Mass' },
  e_mass_Msun: { unit: 'solMass', ucd: 'stat.error;phys.mass', description: '1-sigma error of mass' },
  lum_Lsun: { unit: 'solLum', ucd: 'phys.luminosity', description: 'Bolometric luminosity' },
  e_lum_Lsun: { unit: 'solLum', ucd: 'stat.error;phys.luminosity', description: '1-sigma error of luminosity' },
  radius_Rsun: { unit: 'solRad', ucd: 'phys.size.radius', description: 'Radius' },
  e_radius_Rsun: { unit: 'solRad', ucd: 'stat.error;phys.size.radius', description: '1-sigma error of radius' },
  teff_K: { unit: 'K', ucd: 'phys.temperature.effective', description: 'Effective temperature' },
  e_teff_K: { unit: 'K', ucd: 'stat.error;phys.temperature.effective', description: '1-sigma error of Teff' },
  logg: { unit: 'log(cm.s**-2)', ucd: 'phys.gravity', description: 'Surface gravity, log10(g / cm s^-2)' },
  e_logg: { unit: 'dex', ucd: 'stat.error;phys.gravity', description: '1-sigma error of logg' },
  feh: { unit: 'dex', ucd: 'phys.abund.Fe', description: 'Iron abundance [Fe/H]' },
  parallax_mas: { unit: 'mas', ucd: 'pos.parallax', description: 'Parallax' },
  e_parallax_mas: { unit: 'mas', ucd: 'stat.error;pos.parallax', description: '1-sigma error of parallax' },
  dist_pc: { unit: 'pc', ucd: 'pos.distance', description: 'Distance' },
  mbol: { unit: 'mag', ucd: 'phys.magAbs.bol', description: 'Absolute bolometric magnitude' },
  stage: { ucd: 'src.class.luminosity', description: 'MS (main sequence), giant or WD (white dwarf)' },
};

/** astropy spells units its own way in ECSV headers (APE 6 examples). */
const ECSV_UNIT: Readonly<Record<string, string>> = { 'log(cm.s**-2)': 'dex(cm / s2)' };

export interface Catalog {
  comments: string[];
  columns: TableColumn[];
}

/** Reads a CSV: `#` lines above the header become comments; a column is numeric when every filled cell is a number. */
export function readCsvCatalog(path: string): Catalog {
  const text = readFileSync(path, 'utf8');
  const comments: string[] = [];
  let body = text;
  while (body.startsWith('#')) {
    const nl = body.indexOf('\n');
    comments.push(body.slice(1, nl).trim());
    body = body.slice(nl + 1);
  }
  const parsed = Papa.parse<string[]>(body, { delimiter: ',', skipEmptyLines: true });
  const [header, ...rows] = parsed.data;
  const columns = header.map((name, k): TableColumn => {
    const cells = rows.map((r) => r[k] ?? '');
    const numeric = cells.every((c) => c === '' || Number.isFinite(Number(c)));
    const meta = DEMO_META[name];
    return {
      name,
      type: numeric ? 'double' : 'string',
      unit: meta?.unit,
      ucd: meta?.ucd,
      description: meta?.description,
      values: cells.map((c) => (c === '' ? null : numeric ? Number(c) : c)),
    };
  });
  return { comments, columns };
}

function writeChunks(path: string, chunks: Iterable<string | Uint8Array>): void {
  const fd = openSync(path, 'w');
  try {
    for (const c of chunks) writeSync(fd, typeof c === 'string' ? Buffer.from(c, 'utf8') : c);
  } finally {
    closeSync(fd);
  }
}

export const FORMAT_FILES: Readonly<Record<string, string>> = {
  fits: '.fits',
  vot: '.vot',
  vot2: '.binary2.vot',
  ecsv: '.ecsv',
  parquet: '.parquet',
  'csv.gz': '.csv.gz',
  'fits.gz': '.fits.gz',
  'vot.gz': '.vot.gz',
  'ecsv.gz': '.ecsv.gz',
};

/** The bytes (or text chunks) of one format. */
export async function render(format: string, cat: Catalog, input: string): Promise<(string | Uint8Array)[]> {
  const note = `Converted from ${basename(input)} by sample-catalogs/convert-formats.ts.`;
  switch (format) {
    case 'fits':
      return [
        fitsPrimary([...cat.comments.map((c) => fitsCard('COMMENT', undefined, c.slice(0, 72))), fitsCard('COMMENT', undefined, note)]),
        ...fitsBintable(cat.columns, { extname: 'CATALOG' }),
      ];
    case 'vot':
    case 'vot2':
      return votable([{ name: 'catalog', description: [...cat.comments, note].join(' '), columns: cat.columns }], {
        encoding: format === 'vot' ? 'tabledata' : 'binary2',
      });
    case 'ecsv':
      return ecsv(cat.columns.map((c) => ({ ...c, unit: c.unit === undefined ? undefined : (ECSV_UNIT[c.unit] ?? c.unit) })));
    case 'parquet':
      return [await parquet(cat.columns, { compression: 'ZSTD', rowGroupRows: 100000 })];
    default: {
      const inner = /^(csv|fits|vot|ecsv)\.gz$/.exec(format);
      if (!inner) throw new Error(`unknown format ${format} (known: ${Object.keys(FORMAT_FILES).join(', ')})`);
      const raw = inner[1] === 'csv' ? [readFileSync(input)] : await render(inner[1], cat, input);
      return [gzipSync(Buffer.concat(raw.map((c) => (typeof c === 'string' ? Buffer.from(c, 'utf8') : c))), { level: 6 })];
    }
  }
}

export async function convert(input: string, out: string, formats: readonly string[]): Promise<string[]> {
  const cat = readCsvCatalog(input);
  const written: string[] = [];
  for (const f of formats) {
    const ext = FORMAT_FILES[f];
    if (ext === undefined) throw new Error(`unknown format ${f} (known: ${Object.keys(FORMAT_FILES).join(', ')})`);
    const path = out + ext;
    writeChunks(path, await render(f, cat, input));
    written.push(path);
  }
  return written;
}

const USAGE = `usage: npx tsx sample-catalogs/convert-formats.ts [--in FILE.csv] [--out PREFIX] [--formats LIST]
  --in FILE.csv   the catalog to convert (default sample-catalogs/thistlewood-dr1.csv)
  --out PREFIX    write PREFIX.fits, PREFIX.vot, ... (default: the input without .csv)
  --formats LIST  comma-separated, from ${Object.keys(FORMAT_FILES).join(', ')} (default fits,vot)`;

if (process.argv[1] && import.meta.url === pathToFileURL(resolve(process.argv[1])).href) {
  const args = process.argv.slice(2);
  let input = resolve(import.meta.dirname, 'thistlewood-dr1.csv');
  let out: string | undefined;
  let formats = ['fits', 'vot'];
  for (let i = 0; i < args.length; i++) {
    const a = args[i];
    const v = args[i + 1];
    if ((a === '--in' || a === '--out' || a === '--formats') && v === undefined) {
      process.stderr.write(`${a} needs a value\n${USAGE}\n`);
      process.exit(2);
    }
    if (a === '--in') input = args[++i];
    else if (a === '--out') out = args[++i];
    else if (a === '--formats') formats = args[++i].split(',').map((s) => s.trim()).filter(Boolean);
    else {
      process.stderr.write(`${a === '--help' || a === '-h' ? '' : `unknown argument ${a}\n`}${USAGE}\n`);
      process.exit(a === '--help' || a === '-h' ? 0 : 2);
    }
  }
  convert(input, out ?? input.replace(/\.csv$/, ''), formats).then(
    (paths) => process.stdout.write(paths.map((p) => `wrote ${p}\n`).join('')),
    (err: unknown) => {
      process.stderr.write(`convert-formats: ${err instanceof Error ? err.message : String(err)}\n`);
      process.exit(1);
    },
  );
}
