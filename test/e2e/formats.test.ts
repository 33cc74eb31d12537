/**
 * The demo catalog in every format starsieve reads gives exactly the findings of the CSV; damaged
 * files of every format stop the run with one line and exit code 2; the real FITS and VOTable
 * files in ../shared read with their metadata.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { beforeAll, describe, expect, it } from 'vitest';
import { FORMAT_FILES, convert, readCsvCatalog, render } from '../../sample-catalogs/convert-formats.js';
import { REFERENCE, REPO, SKIP_SHARED, checkWithReport, cli, hasShared, tempDir, type Report } from '../helpers/cli.js';
import { fitsTableFile, parquet, votable } from '../helpers/table-writers.js';

const CSV = join(REPO, 'sample-catalogs/thistlewood-dr1.csv');
const truth = JSON.parse(readFileSync(join(REPO, 'sample-catalogs/thistlewood-dr1.truth.json'), 'utf8')) as { rows: number };
/**
 * `line` exists only for text formats and the fingerprint names the input file; rows whose slips
 * only a CSV can hold (ragged records, text in a number column: `csvOnly` in the truth file) are
 * left out, since binary formats store those cells as typed nulls. The rest must match.
 */
const csvOnlyRows = new Set((truth as unknown as { planted: { row: number; csvOnly?: boolean }[] }).planted.filter((p) => p.csvOnly).map((p) => p.row));
const comparable = (r: Report) =>
  r.findings
    .filter((f) => f.row === null || !csvOnlyRows.has(f.row))
    .map((f) => ({ ...f, line: null, fingerprint: null, message: f.message.replace(/ \(line \d+\)/g, '') }));

describe('the demo catalog in every format', () => {
  const dir = tempDir();
  const files: Record<string, string> = {};
  let csv: Report;

  beforeAll(async () => {
    const formats = Object.keys(FORMAT_FILES);
    const paths = await convert(CSV, join(dir, 'tw'), formats);
    formats.forEach((f, i) => (files[f] = paths[i]));
    files['committed fits'] = join(REPO, 'sample-catalogs/thistlewood-dr1.fits');
    files['committed vot'] = join(REPO, 'sample-catalogs/thistlewood-dr1.vot');
    csv = checkWithReport([CSV, '--fail-on', 'never']).report;
  }, 120_000);

  it('FITS, VOTable (TABLEDATA and BINARY2), Parquet, ECSV and gzip give exactly the findings of the CSV', () => {
    expect(csv.findings.length).toBeGreaterThan(0);
    const seen: Record<string, { format: string; rows: number; same: boolean }> = {};
    for (const [name, path] of Object.entries(files)) {
      const { report, code } = checkWithReport([path, '--fail-on', 'never']);
      expect(code, name).toBe(0);
      seen[name] = { format: report.inputs[0].format, rows: report.inputs[0].rows, same: JSON.stringify(comparable(report)) === JSON.stringify(comparable(csv)) };
      expect(comparable(report), name).toEqual(comparable(csv));
    }
    expect(Object.values(seen).every((s) => s.rows === truth.rows && s.same)).toBe(true);
    expect(new Set(Object.values(seen).map((s) => s.format))).toEqual(new Set(['fits', 'votable', 'parquet', 'ecsv', 'csv']));
  }, 180_000);

  it('still gives the findings of the CSV in small batches, where every reader narrows to the bound columns after the first', () => {
    // The binder sees the first batch; later batches hold only the columns the rules read, text ones included.
    const small = checkWithReport([CSV, '--fail-on', 'never', '--batch-size', '700']).report;
    expect(comparable(small)).toEqual(comparable(csv));
    for (const [name, path] of Object.entries(files)) {
      const { report } = checkWithReport([path, '--fail-on', 'never', '--batch-size', '700']);
      expect(comparable(report), name).toEqual(comparable(csv));
    }
  }, 180_000);

  it('the committed FITS and VOTable versions are what the converter writes, byte for byte', async () => {
    const cat = readCsvCatalog(CSV);
    for (const [format, file] of [
      ['fits', 'thistlewood-dr1.fits'],
      ['vot', 'thistlewood-dr1.vot'],
    ] as const) {
      const chunks = await render(format, cat, CSV);
      const expected = Buffer.concat(chunks.map((c) => (typeof c === 'string' ? Buffer.from(c, 'utf8') : c)));
      const committed = readFileSync(join(REPO, 'sample-catalogs', file));
      expect(committed.equals(expected), `${file} is stale: run npx tsx sample-catalogs/convert-formats.ts`).toBe(true);
    }
  });

  it('`starsieve columns` shows the UCDs and units of the FITS version deciding the binding', () => {
    const r = cli(['columns', files['committed fits']]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/mass\s+mass_Msun\s+solMass\s+ucd \/ metadata\s+mass from its UCD `phys\.mass`, unit solMass from the file's metadata/);
    expect(r.stdout).toMatch(/From the file's metadata: ucd = the TUCDn keywords; metadata = the TUNITn keywords\./);
  });
});

describe('damaged files of every format: one line on stderr with the position, exit 2', () => {
  const dir = tempDir();
  const write = (name: string, data: string | Uint8Array) => {
    const p = join(dir, name);
    writeFileSync(p, data);
    return p;
  };
  const fits = fitsTableFile([{ name: 'mass_Msun', type: 'double', values: Array.from({ length: 500 }, (_, i) => 1 + i / 100) }]);
  const vot2 = votable([{ columns: [{ name: 'mass_Msun', type: 'double', values: [1, 2, 3, 4, 5] }] }], { encoding: 'binary2' }).join('');
  const votTd = votable([{ columns: [{ name: 'mass_Msun', type: 'double', values: [1, 2] }] }]).join('');

  const cases: [string, () => Promise<string> | string, RegExp][] = [
    ['a truncated FITS file', () => write('cut.fits', fits.subarray(0, 5760 + 8 * 200 + 3)), /cut\.fits: truncated file: HDU 1 promises 500 rows.* after 200 complete rows \(at byte 7363, row 201\)$/],
    ['FITS blocks of the wrong size', () => write('block.fits', Buffer.concat([fits.subarray(0, 2000), fits.subarray(2880)])), /block\.fits: the END card of HDU 0 .*wrong block size\?\) \(at HDU 0, header card \d+ \(byte \d+\)\)$/],
    ['VOTable with bad base64', () => write('b64.vot', vot2.replace(/(<STREAM encoding="base64">\n)/, '$1#')), /b64\.vot, line \d+: the STREAM is not valid base64/],
    ['VOTable that is not well-formed XML', () => write('xml.vot', votTd.replace('</TD></TR>', '</TD></TX>')), /xml\.vot, line \d+, column \d+: not well-formed XML: unexpected close tag$/],
    ['a truncated Parquet file', async () => write('cut.parquet', (await parquet([{ name: 'm', type: 'double', values: [1, 2] }])).subarray(0, 200)), /cut\.parquet: truncated or damaged Parquet file: it is 200 bytes and does not end with PAR1.* \(at byte 200\)$/],
    ['ECSV with a broken YAML header', () => write('bad.ecsv', '# %ECSV 1.0\n# ---\n# datatype: [\nmass_Msun\n1\n'), /bad\.ecsv, line \d+, column \d+: the ECSV header is not valid YAML/],
    ['a truncated gzip CSV', () => write('cut.csv.gz', gzipSync(readFileSync(CSV)).subarray(0, 3000)), /cut\.csv\.gz:line \d+: cannot read .*cut\.csv\.gz: the gzip data is damaged or truncated \(unexpected end of file\) after \d+ decompressed bytes$/],
  ];
  for (const [what, make, message] of cases) {
    it(what, async () => {
      const r = cli(['check', await make()]);
      expect(r.code, r.stderr).toBe(2);
      const lines = r.stderr.trimEnd().split('\n');
      expect(lines.length, r.stderr).toBe(1);
      expect(lines[0]).toMatch(/^starsieve: /);
      expect(lines[0]).toMatch(message);
      expect(r.stderr).not.toMatch(/\n\s+at /);
    });
  }

  it('a binding file with a mistake names its line and column', () => {
    const b = write('b.yaml', 'columns:\n  mass_Msun: { quantity: mass, unit: parsec }\n');
    const r = cli(['check', write('ok.fits', fits), '--binding', b]);
    expect(r.code).toBe(2);
    expect(r.stderr.trimEnd()).toMatch(/^starsieve: .*b\.yaml, line 2, column 38: column `mass_Msun` is bound to mass, but its unit `parsec`/);
  });
});

describe('a literature table whose names say nothing, bound with a binding file', () => {
  it('finds the watts slip the file makes visible', () => {
    const dir = tempDir();
    // Row 2: L = 3.9e26 in a solar-units column, R = 1.0, Teff = 5800 K: 1.02 L_sun read as watts
    // (luminosity-unit-mixup's own documented example; IAU 2015 B3 L_sun = 3.828e26 W).
    const table = join(dir, 'lit.csv');
    writeFileSync(table, 'c1,c2,c3,c4,c5\nStar A,1.0,1.0,1.0,5772\nStar B,1.0,3.9e26,1.0,5800\n');
    const binding = join(dir, 'lit.yaml');
    writeFileSync(
      binding,
      [
        'starsieve-binding: 1',
        'columns:',
        '  c1: id',
        '  c2: { quantity: mass, unit: solMass }',
        '  c3: { quantity: luminosity, unit: solLum }',
        '  c4: { quantity: radius, unit: solRad }',
        '  c5: { quantity: teff, unit: K }',
        '',
      ].join('\n'),
    );
    const { report } = checkWithReport([table, '--binding', binding, '--fail-on', 'never']);
    expect(report.bindings[0].columns.map((c) => c.column)).toEqual(['c1', 'c2', 'c3', 'c4', 'c5']);
    const slip = report.findings.find((f) => f.rule === 'luminosity-unit-mixup');
    expect(slip?.id).toBe('Star B');
    expect(slip?.suggestion?.unit).toBe('solLum');
    expect(report.findings.filter((f) => f.id === 'Star A')).toEqual([]);
  });
});

describe.skipIf(!hasShared)('real FITS and VOTable files (../shared/reference-data)', () => {
  if (!hasShared) it.skip(SKIP_SHARED, () => {});

  it('the M-dwarf relation tables (FITS-plus, HDU 1) and the sdb VOTable read fully, with no error-level findings', () => {
    // Measured: 0 error-level findings in 1401 + 98 FITS rows and in 149 VOTable rows.
    for (const [rel, rows, format] of [
      ['mdwarf-relations-fits/table3-tsed-r-relation.fits', 1401, 'fits'],
      ['mdwarf-relations-fits/table4-lsed-r-relation.fits', 98, 'fits'],
      ['life-nearby-stars/sdb_30pc_09_02_2024.xml', 149, 'votable'],
    ] as const) {
      const { report } = checkWithReport([join(REFERENCE, rel), '--fail-on', 'never']);
      expect(report.inputs[0]).toMatchObject({ format, rows, records: rows, unparseableRecords: 0 });
      expect(report.findings.filter((f) => f.severity === 'error'), rel).toEqual([]);
      for (const rule of report.rules) {
        const pi = rule.perInput[0];
        expect(pi.checked + Object.values(pi.skipped).reduce((a, b) => a + b, 0), `${rel} ${rule.id}`).toBe(rows);
      }
    }
  });

  it('binds the FITS luminosity and Teff from their UCDs and TUNIT units', () => {
    const r = cli(['columns', join(REFERENCE, 'mdwarf-relations-fits/table4-lsed-r-relation.fits')]);
    expect(r.stdout).toMatch(/luminosity\s+lsed\s+solLum\s+ucd \/ metadata/);
    const t = cli(['columns', join(REFERENCE, 'mdwarf-relations-fits/table3-tsed-r-relation.fits'), '--json']);
    const teff = (JSON.parse(t.stdout) as { binding: { columns: { quantity: string; unit: string; quantitySource: string; unitSource: string }[] } }).binding.columns.find((c) => c.quantity === 'teff');
    expect(teff).toMatchObject({ unit: 'K', quantitySource: 'ucd', unitSource: 'metadata' });
  });
});
