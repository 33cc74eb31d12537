/**
 * The broken-input corpus: catalogs as they arrive from truncated downloads, spreadsheet round
 * trips, mixed encodings and wrong extensions. Every file is made here from a few lines of code,
 * so the corpus never drifts from what the tests expect of it.
 *
 *   npx tsx test/robustness/make-broken.ts            # rewrites the small cases in test/fixtures/broken
 *   npx tsx test/robustness/make-broken.ts --out DIR --large   # every case, the big ones too
 *
 * The small cases are committed under test/fixtures/broken so they can be opened and looked at;
 * the tests regenerate all of them into a temporary folder and check the committed copies are
 * current. The big ones (a 10 MB field, a gzip bomb) are only ever made in a temporary folder.
 *
 * The rows are ordinary stars with values of the Sun's order (IAU 2015 B3 nominal values: 1 L_sun,
 * 1 R_sun, Teff 5772 K), so the rules have something ordinary to check around the damage.
 */
import { mkdirSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { constants as zlibConstants, createGzip, gzipSync } from 'node:zlib';
import { Field, Float64, RecordBatch, Schema, Struct, Table, Utf8, makeData, tableToIPC, vectorFromArray } from 'apache-arrow';
import { fitsBintable, fitsCard, fitsHeader, fitsPrimary, fitsTableFile, votable, type FitsColumn } from '../helpers/table-writers.js';

export const FIXTURE_DIR = resolve(dirname(fileURLToPath(import.meta.url)), '../fixtures/broken');

export const HEADER = 'id,mass_Msun,lum_Lsun,teff_K,radius_Rsun';
/** Ordinary rows: the Sun (IAU 2015 B3 nominal values) and two main-sequence stars of common practice. */
export const ROWS = ['sun,1,1,5772,1', 'kdwarf,0.7,0.15,4400,0.68', 'fstar,1.3,3.2,6500,1.4'];
const csv = (...lines: string[]) => lines.join('\n') + '\n';

/** Bytes of the decompressed gzip bomb: zeros and commas compress about a thousandfold. */
export const BOMB_BYTES = 200 * 1024 * 1024;
/** Characters of the one enormous field (10 MB, past the 8 MiB record cap). */
export const HUGE_FIELD_CHARS = 10 * 1024 * 1024;

export interface BrokenCase {
  /** File name in the corpus folder. */
  file: string;
  /** What is wrong with it. */
  what: string;
  /** Too big to commit: made only in a temporary folder. */
  large?: boolean;
  make: () => Uint8Array | string | Promise<Uint8Array | string>;
}

function columnsOf(rows: readonly string[]): FitsColumn[] {
  const cells = rows.map((r) => r.split(','));
  return HEADER.split(',').map((name, k) =>
    k === 0
      ? { name, type: 'string' as const, values: cells.map((c) => c[0]) }
      : { name, type: 'double' as const, values: cells.map((c) => Number(c[k])) },
  );
}

function arrowTable(names: readonly string[], rows: readonly (readonly (string | number)[])[]): Table {
  const fields = names.map((n, k) => new Field(n, typeof rows[0][k] === 'string' ? new Utf8() : new Float64(), true));
  const children = fields.map((f, k) => vectorFromArray(rows.map((r) => r[k]), f.type).data[0]);
  const struct = makeData({ type: new Struct(fields), length: rows.length, nullCount: 0, children });
  return new Table([new RecordBatch(new Schema(fields), struct)]);
}

const many = (n: number) => Array.from({ length: n }, (_, i) => `s${i + 1},${(0.5 + (i % 10) / 10).toFixed(2)},1,5772,1`);

export const CASES: readonly BrokenCase[] = [
  { file: 'empty.csv', what: 'an empty file', make: () => '' },
  { file: 'header-only.csv', what: 'a header and no rows', make: () => csv(HEADER) },
  {
    file: 'ragged.csv',
    what: 'rows with too few and too many fields',
    make: () => csv(HEADER, ROWS[0], 'short,1,1', ROWS[1], 'long,1,1,5772,1,extra,more', ROWS[2]),
  },
  {
    file: 'unterminated-quote.csv',
    what: 'a quote opened on the last line and never closed',
    make: () => csv(HEADER, ROWS[0], ROWS[1], '"open,1,1,5772,1'),
  },
  {
    file: 'nul-bytes.csv',
    what: 'NUL bytes inside a field and a line of NULs',
    make: () => csv(HEADER, ROWS[0], 'nu\0l,1,1,5772,1', '\0\0\0\0', ROWS[1], 'x,1\0,1,5772,1', 'y,\x001,1,5772,1'),
  },
  {
    file: 'huge-field.csv',
    what: 'one 10 MB field on one line (a record past the size cap)',
    large: true,
    make: () => `${HEADER}\n${ROWS[0]}\nbig,${'9'.repeat(HUGE_FIELD_CHARS)},1,5772,1\n${ROWS[1]}\n`,
  },
  {
    file: 'latin1.csv',
    what: 'Latin-1 text: bytes that are not valid UTF-8 (a name with é and an Å in the header)',
    make: () => Buffer.from(csv(`${HEADER},comment_\xc5`, `${ROWS[0]},ok`, 'b\xe9ta,1,1,5772,1,caf\xe9', `${ROWS[1]},ok`), 'latin1'),
  },
  {
    file: 'utf16le-bom.csv',
    what: 'UTF-16 little-endian text with a byte-order mark',
    make: () => Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(csv(HEADER, ...ROWS), 'utf16le')]),
  },
  {
    file: 'utf16be-bom.csv',
    what: 'UTF-16 big-endian text with a byte-order mark',
    make: () => Buffer.concat([Buffer.from([0xfe, 0xff]), Buffer.from(csv(HEADER, ...ROWS), 'utf16le').swap16()]),
  },
  {
    file: 'utf16le-nobom.csv',
    what: 'UTF-16 little-endian text without a byte-order mark',
    make: () => Buffer.from(csv(HEADER, ...ROWS), 'utf16le'),
  },
  {
    file: 'utf16be-nobom.csv',
    what: 'UTF-16 big-endian text without a byte-order mark',
    make: () => Buffer.from(csv(HEADER, ...ROWS), 'utf16le').swap16(),
  },
  {
    file: 'utf32le-bom.csv',
    what: 'UTF-32 little-endian text with a byte-order mark (not read: refused)',
    make: () => {
      const text = csv(HEADER, ...ROWS);
      const out = Buffer.alloc(4 + 4 * text.length);
      out.writeUInt32LE(0xfeff, 0);
      for (let i = 0; i < text.length; i++) out.writeUInt32LE(text.charCodeAt(i), 4 + 4 * i);
      return out;
    },
  },
  { file: 'cr-only.csv', what: 'classic Mac line ends (CR only), the last row short', make: () => [HEADER, ...ROWS, 'last,1,1'].join('\r') + '\r' },
  {
    file: 'duplicate-names.csv',
    what: 'a repeated column name and an empty one',
    make: () => csv('id,mass_Msun,mass_Msun,,lum_Lsun', 'a,1,1,x,1', 'b,0.7,0.7,y,0.15'),
  },
  {
    file: 'odd-numbers.csv',
    what: 'numbers written as 1,23 (decimal comma), 1.0D+26 (Fortran), +inf, NaN, --, nan',
    make: () =>
      csv(
        'id;mass_Msun;lum_W;teff_K',
        'comma;1,23;3,828e26;5772',
        'fortran;1.0;1.0D+26;5772',
        'inf;1.0;+inf;5772',
        'nan1;NaN;3.828e26;5772',
        'dash;--;3.828e26;5772',
        'nan2;nan;3.828e26;5772',
        'plain;1.0;3.828e26;5772',
      ),
  },
  {
    file: 'really-html.csv',
    what: 'an HTML error page saved under a .csv name',
    make: () =>
      '<!DOCTYPE html>\n<html><head><title>404 Not Found</title></head>\n<body><h1>Not Found</h1><p>The requested URL /cat.csv was not found, sorry.</p></body></html>\n',
  },
  {
    file: 'really-html-plain.csv',
    what: 'an HTML page without a doctype, as some servers send',
    make: () => '<html>\n<head><title>Error</title></head>\n<body>Service unavailable, try again later</body>\n</html>\n',
  },
  {
    file: 'arrow-cut.arrow',
    what: 'an Arrow IPC file cut in half',
    make: () => {
      const rows = many(2000).map((r) => r.split(',').map((c, k) => (k === 0 ? c : Number(c))));
      const bytes = tableToIPC(arrowTable(HEADER.split(','), rows), 'file');
      return bytes.subarray(0, bytes.length >> 1);
    },
  },
  {
    file: 'arrow-stream-cut.arrows',
    what: 'an Arrow IPC stream cut in half',
    make: () => {
      const rows = many(2000).map((r) => r.split(',').map((c, k) => (k === 0 ? c : Number(c))));
      const bytes = tableToIPC(arrowTable(HEADER.split(','), rows), 'stream');
      return bytes.subarray(0, bytes.length >> 1);
    },
  },
  {
    file: 'arrow-schema-change.arrows',
    what: 'an Arrow stream whose second message block brings a different schema',
    make: () => {
      const a = tableToIPC(arrowTable(HEADER.split(','), ROWS.map((r) => r.split(',').map((c, k) => (k === 0 ? c : Number(c))))), 'stream');
      const b = tableToIPC(arrowTable(['name', 'mass_kg'], [['x', 1.989e30]]), 'stream');
      // Two streams back to back: the first end-of-stream marker is dropped, so the second schema
      // arrives where a record batch should.
      return Buffer.concat([a.subarray(0, a.length - 8), b]);
    },
  },
  {
    file: 'fits-naxis2-too-big.fits',
    what: 'a FITS table whose NAXIS2 promises more rows than the file holds',
    make: () => {
      const cols = columnsOf(ROWS);
      const [header, ...data] = fitsBintable(cols);
      const text = header.toString('latin1').replace(/NAXIS2  = +3 /, (m) => m.replace(/ 3 $/, '90 ').padStart(m.length));
      return Buffer.concat([fitsPrimary(), Buffer.from(text, 'latin1'), ...data]);
    },
  },
  {
    file: 'fits-no-end.fits',
    what: 'a FITS table header without its END card',
    make: () => {
      const cards = [fitsCard('XTENSION', 'BINTABLE'), fitsCard('BITPIX', 8), fitsCard('NAXIS', 2), fitsCard('NAXIS1', 8), fitsCard('NAXIS2', 1)];
      const block = fitsHeader(cards).toString('latin1').replace(/END {77}/, ' '.repeat(80));
      return Buffer.concat([fitsPrimary(), Buffer.from(block, 'latin1')]);
    },
  },
  {
    file: 'fits-truncated.fits',
    what: 'a FITS table cut off in the middle of its data',
    make: () => {
      const full = fitsTableFile(columnsOf(many(500)));
      return full.subarray(0, 2880 * 2 + 5000);
    },
  },
  {
    file: 'votable-unclosed.vot',
    what: 'a VOTable whose document stops inside the table, tags left open',
    make: () => {
      const doc = votable([{ columns: columnsOf(ROWS) }]).join('');
      return doc.slice(0, doc.indexOf('</TR>') + 5) + '\n     <TR><TD>cut';
    },
  },
  {
    file: 'votable-mismatched.vot',
    what: 'a VOTable with a wrongly nested closing tag',
    make: () => votable([{ columns: columnsOf(ROWS) }]).join('').replace('</TR>', '</TD></TABLE>'),
  },
  {
    file: 'votable-bad-base64.vot',
    what: 'a BINARY2 VOTable whose base64 stream holds characters that are not base64',
    make: () => {
      const doc = votable([{ columns: columnsOf(ROWS) }], { encoding: 'binary2' }).join('');
      const at = doc.indexOf('<STREAM encoding="base64">') + '<STREAM encoding="base64">\n'.length;
      return doc.slice(0, at + 10) + '!!**~~' + doc.slice(at + 16);
    },
  },
  {
    file: 'gzip-cut.csv.gz',
    what: 'a gzip-compressed CSV cut short',
    make: () => {
      const gz = gzipSync(csv(HEADER, ...many(5000)));
      return gz.subarray(0, gz.length >> 1);
    },
  },
  {
    file: 'latin1-late.csv',
    what: 'UTF-8 for 300 rows, then a Latin-1 byte (past the first 4 KiB, where the encoding is decided)',
    make: () => Buffer.concat([Buffer.from(csv(HEADER, ...many(300))), Buffer.from(csv('caf\xe9,1,1,5772,1', ROWS[0]), 'latin1')]),
  },
  {
    file: 'latin1-late.csv.gz',
    what: 'a gzip-compressed CSV that is UTF-8 for 300 rows, then has a Latin-1 byte (past the first 4 KiB)',
    make: () => gzipSync(Buffer.concat([Buffer.from(csv(HEADER, ...many(300))), Buffer.from(csv('caf\xe9,1,1,5772,1', ROWS[0]), 'latin1')])),
  },
  {
    file: 'gzip-bomb.csv.gz',
    what: `a gzip bomb: ${BOMB_BYTES >> 20} MB of commas behind a header, about 200 kB compressed`,
    large: true,
    make: () => gzipBomb(BOMB_BYTES),
  },
];

/** A header line and then `bytes` of commas, compressed as a stream (never one 200 MB buffer). */
async function gzipBomb(bytes: number): Promise<Uint8Array> {
  const gz = createGzip({ level: zlibConstants.Z_BEST_COMPRESSION });
  const out: Buffer[] = [];
  gz.on('data', (b: Buffer) => out.push(b));
  const done = new Promise<void>((ok, fail) => {
    gz.on('end', ok);
    gz.on('error', fail);
  });
  gz.write(`${HEADER}\n`);
  const block = Buffer.alloc(1 << 20, ',');
  for (let left = bytes; left > 0; left -= block.length) {
    if (!gz.write(left >= block.length ? block : block.subarray(0, left))) await new Promise((ok) => gz.once('drain', ok));
  }
  gz.end();
  await done;
  return Buffer.concat(out);
}

/** Writes the cases into `dir` and returns their paths by file name. */
export async function makeBroken(dir: string, options: { large?: boolean } = {}): Promise<Map<string, string>> {
  mkdirSync(dir, { recursive: true });
  const paths = new Map<string, string>();
  for (const c of CASES) {
    if (c.large && !options.large) continue;
    const path = join(dir, c.file);
    writeFileSync(path, await c.make());
    paths.set(c.file, path);
  }
  return paths;
}

/** The folder's README: what each file is, so the corpus can be browsed without this script. */
export function fixtureReadme(): string {
  const lines = [
    '# Broken inputs',
    '',
    'Made by `npx tsx test/robustness/make-broken.ts`; do not edit by hand (test/robustness/corpus.test.ts',
    'checks these copies against the generator). What starsieve does with each is asserted in that test',
    'and summarised in README.md, "Limits". The big cases are made only in a temporary folder.',
    '',
    '| file | what is wrong |',
    '| --- | --- |',
    ...CASES.map((c) => `| ${c.large ? `(${c.file}, not committed)` : c.file} | ${c.what.replace(/\|/g, '\\|')} |`),
    '',
  ];
  return lines.join('\n');
}

/** The committed copies: the small cases only, and nothing else in the folder. */
export async function writeFixtures(dir = FIXTURE_DIR): Promise<void> {
  mkdirSync(dir, { recursive: true });
  const keep = new Set(CASES.filter((c) => !c.large).map((c) => c.file));
  for (const f of readdirSync(dir)) if (!keep.has(f) && f !== 'README.md') rmSync(join(dir, f));
  await makeBroken(dir);
  writeFileSync(join(dir, 'README.md'), fixtureReadme());
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const args = process.argv.slice(2);
  const out = args.includes('--out') ? args[args.indexOf('--out') + 1] : undefined;
  if (out) await makeBroken(resolve(out), { large: args.includes('--large') });
  else await writeFixtures();
}
