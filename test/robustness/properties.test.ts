/**
 * Property-based tests (fast-check): whatever the bytes, the readers either read them or stop with
 * an InputError, and every record is accounted for; CSV-shaped text reads the same however it is
 * chunked and batched, and so do the findings; rules survive any finite numbers; unit
 * conversions round-trip. Runs are kept small so the suite stays quick on a shared machine; a
 * failure prints its seed and the shrunk counterexample, to replay with `{ seed, path }`.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { ALL_RULES } from '../../rules/checks/index.js';
import type { NumericQuantity } from '../../rules/engine/quantities.js';
import { LINEAR_FACTORS, type Dimension } from '../../rules/physics/units.js';
import { convertValues, valueSpec } from '../../cli/binding/convert.js';
import { InputError } from '../../cli/readers/types.js';
import { makeBatch, runRules, type ColumnSpec } from '../helpers/batch.js';
import { checkPath, drainPath, type Drained } from './pipeline.js';

const dir = mkdtempSync(join(tmpdir(), 'starsieve-props-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
let fileNo = 0;
const write = (ext: string, content: string | Uint8Array) => {
  const p = join(dir, `f${fileNo++}${ext}`);
  writeFileSync(p, content);
  return p;
};

/** Reads a file and returns what came out, or the InputError; any other throw fails the property. */
async function readOrRefuse(path: string, options = {}): Promise<Drained | InputError> {
  try {
    return await drainPath(path, options);
  } catch (err) {
    if (err instanceof InputError) return err;
    throw err;
  }
}

function accounted(d: Drained, textFormat: boolean): void {
  expect(d.stats.records).toBe(d.stats.rows + d.stats.unparseable);
  expect(d.delivered).toBe(d.stats.rows);
  if (textFormat) expect(d.rowless).toBe(d.stats.unparseable);
}

// ---- arbitrary bytes ---------------------------------------------------------------------------

const ascii = (s: string) => Uint8Array.from(Buffer.from(s, 'latin1'));
/** Starts that steer the sniffer to each reader, so random bytes reach all of them. */
const PREFIXES: readonly [string, Uint8Array][] = [
  ['.csv', new Uint8Array(0)],
  ['.csv', ascii('id,mass_Msun,lum_Lsun\n')],
  ['.tsv', ascii('id\tmass\n')],
  ['.ecsv', ascii('# %ECSV 1.0\n# ---\n# datatype:\n# - {name: a, datatype: float64}\n')],
  ['.vot', ascii('<?xml version="1.0"?><VOTABLE version="1.4"><RESOURCE><TABLE><FIELD name="a" datatype="double"/><DATA><TABLEDATA><TR><TD>')],
  ['.fits', ascii('SIMPLE  =                    T'.padEnd(80))],
  ['.arrow', ascii('ARROW1\0\0')],
  ['.arrows', Uint8Array.from([0xff, 0xff, 0xff, 0xff])],
  ['.parquet', ascii('PAR1')],
  ['.csv.gz', Uint8Array.from([0x1f, 0x8b, 0x08, 0x00])],
];

describe('arbitrary bytes', () => {
  it('never make a reader throw anything but an InputError, and never lose count', async () => {
    await fc.assert(
      fc.asyncProperty(fc.integer({ min: 0, max: PREFIXES.length - 1 }), fc.uint8Array({ maxLength: 600 }), fc.boolean(), async (k, tail, gzipTail) => {
        const [ext, prefix] = PREFIXES[k];
        let bytes = Buffer.concat([prefix, tail]);
        if (ext === '.csv.gz' && gzipTail) bytes = gzipSync(tail);
        const r = await readOrRefuse(write(ext, bytes));
        if (r instanceof InputError) {
          // One line, so the command line can print it as one.
          expect(r.message).not.toMatch(/\n/);
          return;
        }
        accounted(r, ext === '.csv' || ext === '.tsv' || ext === '.ecsv' || ext === '.csv.gz');
      }),
      { numRuns: 300 },
    );
  });
});

// ---- CSV-shaped text ---------------------------------------------------------------------------

const number = fc.oneof(
  fc.integer({ min: -100000, max: 100000 }).map(String),
  fc.double({ min: -1e30, max: 1e30, noNaN: true }).map(String),
  fc.constantFrom('1.0D+26', '1,23', '51,230', '+inf', '-Infinity', 'NaN', '--', 'nan', '...', '', ' ', '1e400', '0x1A', ' 5 ', '\t3', '\u00001'),
);
const char = fc.constantFrom('a', 'b', 'x', ',', ';', '"', '\n', '\r', '\r\n', '#', ' ', '\t', 'é', '😀', '\u0000', '\ufeff');
const text = fc.string({ unit: char, maxLength: 10 });
const field = fc.oneof(
  { weight: 5, arbitrary: number },
  { weight: 2, arbitrary: text },
  { weight: 2, arbitrary: text.map((s) => `"${s.replace(/"/g, '""')}"`) },
  { weight: 1, arbitrary: text.map((s) => `"${s}`) },
);
const lineEnd = fc.constantFrom('\n', '\r\n', '\r');
const record = fc.array(field, { maxLength: 6 }).map((f) => f.join(','));
const csvText = fc
  .tuple(
    fc.option(fc.constantFrom('\ufeff', '# a comment\n', '\n\n'), { nil: '' }),
    fc.array(fc.constantFrom('id', 'mass_Msun', 'lum_Lsun', 'teff_K', '', 'mass_Msun', '"a,b"'), { minLength: 1, maxLength: 5 }),
    fc.array(fc.tuple(record, lineEnd), { maxLength: 14 }),
    fc.boolean(),
  )
  .map(([lead, names, rows, endsWithBreak]) => {
    let s = lead + names.join(',') + '\n' + rows.map(([r, e]) => r + e).join('');
    if (!endsWithBreak && s.endsWith('\n')) s = s.slice(0, -1);
    return s;
  });

/** The chunkings and batch sizes to compare against a plain read (64 kB reads, 16384-row batches). */
const VARIANTS = [
  { readChunkBytes: 1, batchSize: 3 },
  { readChunkBytes: 7, batchSize: 1 },
  { readChunkBytes: 65536, batchSize: 7 },
] as const;

describe('CSV-shaped text', () => {
  it('reads the same however it is chunked (1 byte, 7 bytes, 64 kB), batched or gzipped, and keeps count', async () => {
    await fc.assert(
      fc.asyncProperty(csvText, async (s) => {
        const path = write('.csv', s);
        const base = await readOrRefuse(path, { readChunkBytes: 65536 });
        if (!(base instanceof InputError)) accounted(base, true);
        const gz = await readOrRefuse(write('.csv.gz', gzipSync(Buffer.from(s))));
        for (const other of [...(await Promise.all(VARIANTS.map((v) => readOrRefuse(path, v)))), gz]) {
          if (base instanceof InputError) {
            expect(other).toBeInstanceOf(InputError);
            expect((other as InputError).message.replace(/\S+\.csv(\.gz)?/g, 'FILE')).toBe(base.message.replace(/\S+\.csv(\.gz)?/g, 'FILE'));
            continue;
          }
          expect(other).not.toBeInstanceOf(InputError);
          const o = other as Drained;
          expect({ ...o, notes: o.notes }).toEqual({ ...base, notes: base.notes });
        }
      }),
      { numRuns: 100 },
    );
  });
});

// ---- findings through the whole pipeline ---------------------------------------------------------

/** A star row with values anywhere from plausible to absurd, some cells left empty or written oddly. */
const value = (lo: number, hi: number) =>
  fc.oneof(
    { weight: 8, arbitrary: fc.double({ min: lo, max: hi, noNaN: true }).map((x) => String(Number(x.toPrecision(4)))) },
    { weight: 1, arbitrary: fc.double({ min: lo * 1e3, max: hi * 1e3, noNaN: true }).map((x) => String(Number(x.toPrecision(4)))) },
    // Quoted, so the comma stays in the cell. No thousands-style `1,500`: whether a column "writes
    // decimal commas" is decided per batch (cli/binding/cells.ts), so `1,500` after a `1,5` reads
    // as 1500 in a later batch but as unparseable in the same one (reported as a known issue).
    { weight: 1, arbitrary: fc.constantFrom('', 'NaN', '--', 'abc', '"1,5"', '-1', '1.0D+3') },
  );
const starRow = fc
  .tuple(fc.integer({ min: 1, max: 40 }), value(0.08, 60), value(1e-4, 1e6), value(0.01, 1000), value(2500, 50000), value(0, 9), value(0, 0.5))
  .map(([id, ...v]) => [`s${id}`, ...v].join(','));
const starCsv = fc
  .array(starRow, { minLength: 1, maxLength: 40 })
  .map((rows) => ['id,mass_Msun,lum_Lsun,radius_Rsun,teff_K,logg,e_mass_Msun', ...rows].join('\n') + '\n');

/** Every unit stated, so the binder infers nothing. */
const PINNED = { bind: {}, units: { mass_Msun: 'solMass', lum_Lsun: 'solLum', radius_Rsun: 'solRad', teff_K: 'K', logg: 'log(cm.s**-2)', e_mass_Msun: 'solMass' } };

describe('findings', () => {
  it('are identical however the input is chunked (1 byte, 7 bytes, 64 kB)', async () => {
    await fc.assert(
      fc.asyncProperty(starCsv, async (s) => {
        const path = write('.csv', s);
        const base = await checkPath(path, { readChunkBytes: 65536 });
        expect(base.stats.records).toBe(base.stats.rows + base.stats.unparseable);
        for (const readChunkBytes of [1, 7]) {
          const other = await checkPath(path, { readChunkBytes });
          expect(other.findings).toEqual(base.findings);
          expect(other.reports).toEqual(base.reports);
        }
      }),
      { numRuns: 25 },
    );
  });

  // The binder infers units from its sample, the first 16384 rows whatever the batch size, and
  // decides there whether a column writes decimal commas: nothing may depend on the batch size,
  // with the units inferred or given.
  it('are identical whatever the batch size (1, 7, 16384 rows)', async () => {
    await fc.assert(
      fc.asyncProperty(starCsv, fc.boolean(), async (s, pinned) => {
        const path = write('.csv', s);
        const units = pinned ? PINNED : undefined;
        const base = await checkPath(path, { batchSize: 16384 }, units);
        for (const v of VARIANTS) {
          const other = await checkPath(path, v, units);
          expect(other.findings).toEqual(base.findings);
          expect(other.reports).toEqual(base.reports);
        }
      }),
      { numRuns: 25 },
    );
  });
});

describe('findings on the two files that once depended on the batch size', () => {
  it.each([
    ['a logg unit inferred from a one-row sample', 'id,mass_Msun,lum_Lsun,radius_Rsun,teff_K,logg,e_mass_Msun\ns1,0.08,0.0001,1,5,2500,0,0\ns1,80,,0.01,2500,0,0\ns1,,,0.01,2500,0,0\n'],
    ['a decimal comma seen in another batch', 'id,mass_Msun,lum_Lsun\nb,"1,5",1\nc,"1,500",1\n'],
  ])('%s', async (_name, text) => {
    const path = write('.csv', text);
    const base = await checkPath(path, { batchSize: 16384 });
    const one = await checkPath(path, { batchSize: 1 });
    expect(one.findings).toEqual(base.findings);
    expect(one.reports).toEqual(base.reports);
  });
});

// ---- rules on arbitrary finite rows -------------------------------------------------------------

const finite = fc.oneof(
  { weight: 6, arbitrary: fc.double({ noNaN: true, noDefaultInfinity: true }) },
  { weight: 3, arbitrary: fc.double({ min: 1e-6, max: 1e6, noNaN: true }) },
  { weight: 1, arbitrary: fc.constantFrom(0, -0, Number.MIN_VALUE, Number.MAX_VALUE, -Number.MAX_VALUE, NaN) },
);
const QUANTITIES: readonly NumericQuantity[] = ['mass', 'luminosity', 'radius', 'teff', 'logg', 'feh', 'parallax', 'distance', 'mbol'];

describe('rules', () => {
  it('never throw on arbitrary finite rows, and every rule accounts for every row', () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 30 }).chain((n) =>
          fc.record({
            n: fc.constant(n),
            present: fc.subarray([...QUANTITIES], { minLength: 1 }),
            values: fc.array(fc.array(finite, { minLength: n, maxLength: n }), { minLength: QUANTITIES.length, maxLength: QUANTITIES.length }),
            errs: fc.array(fc.option(fc.array(finite, { minLength: n, maxLength: n }), { nil: undefined }), { minLength: QUANTITIES.length, maxLength: QUANTITIES.length }),
            ids: fc.array(fc.constantFrom('a', 'b', 'c', ''), { minLength: n, maxLength: n }),
            stages: fc.array(fc.constantFrom('MS', 'giant', 'WD', 'sdB', ''), { minLength: n, maxLength: n }),
          }),
        ),
        ({ n, present, values, errs, ids, stages }) => {
          const cols: Partial<Record<NumericQuantity, ColumnSpec>> = {};
          for (const q of present) {
            const k = QUANTITIES.indexOf(q);
            cols[q] = { values: values[k], err: errs[k] };
          }
          const { reports } = runRules(ALL_RULES, [makeBatch(cols, { id: ids, stage: stages })]);
          for (const r of reports) {
            if (r.status === 'skipped') continue;
            const skipped = Object.values(r.skipped).reduce((a, b) => a + b, 0);
            expect(r.checked + skipped, `${r.id}: checked ${r.checked} + skipped ${skipped} of ${n} rows`).toBe(n);
          }
        },
      ),
      { numRuns: 300 },
    );
  });
});

// ---- unit conversions ---------------------------------------------------------------------------

/** Quantity and dimension pairs whose units the binder reads both linearly and as log(unit). */
const LINEAR: readonly [NumericQuantity, Dimension][] = [
  ['luminosity', 'luminosity'],
  ['mass', 'mass'],
  ['radius', 'radius'],
  ['distance', 'distance'],
  ['parallax', 'angle'],
  ['teff', 'temperature'],
];
const one = (q: NumericQuantity, unit: string, x: number) => {
  const v = new Float64Array(1);
  convertValues(Float64Array.of(x), valueSpec(q, unit, 'c'), v, null);
  return v[0];
};
const close = (a: number, b: number, rel: number) => Math.abs(a - b) <= rel * Math.max(Math.abs(a), Math.abs(b));

describe('unit conversions', () => {
  it('the binder uses the factors of rules/physics/units.ts (IAU 2015 B3, CODATA 2018) for every listed unit', () => {
    for (const [q, dim] of LINEAR) {
      for (const [unit, factor] of Object.entries(LINEAR_FACTORS[dim])) {
        expect(close(valueSpec(q, unit, 'c').factor, factor, 1e-15), `${q} in ${unit}`).toBe(true);
      }
    }
  });

  it('round-trip: to the canonical unit and back, between any two units, and through log(unit)', () => {
    const pairs = LINEAR.flatMap(([q, dim]) => Object.keys(LINEAR_FACTORS[dim]).map((u) => [q, dim, u] as const));
    fc.assert(
      fc.property(fc.constantFrom(...pairs), fc.constantFrom(...pairs), fc.double({ min: -30, max: 30, noNaN: true }), ([q, dim, u], [, dim2, u2], e) => {
        const x = 10 ** e;
        const canonical = one(q, u, x);
        // Back into the unit the value was written in.
        expect(close(canonical / LINEAR_FACTORS[dim][u], x, 1e-14)).toBe(true);
        // Through any other unit of the same dimension.
        if (dim2 === dim) expect(close(one(q, u2, canonical / LINEAR_FACTORS[dim][u2]), canonical, 1e-14)).toBe(true);
        // log10 of the number in log(unit) gives the same value (pow and log10 add ~1e-15 relative per decade).
        expect(close(one(q, `log(${u})`, Math.log10(x)), canonical, 1e-12)).toBe(true);
      }),
      { numRuns: 300 },
    );
  });

  it('round-trip: surface gravity in cm/s2, m/s2 and their logs agree (1 m/s2 = 100 cm/s2 by definition)', () => {
    fc.assert(
      fc.property(fc.double({ min: -2, max: 9, noNaN: true }), (logg) => {
        const g = 10 ** logg;
        for (const [unit, written] of [
          ['log(cm.s**-2)', logg],
          ['cm/s2', g],
          ['m/s2', g / 100],
          ['log(m.s**-2)', logg - 2],
        ] as const) {
          expect(Math.abs(one('logg', unit, written) - logg), unit).toBeLessThan(1e-12);
        }
      }),
      { numRuns: 200 },
    );
  });
});
