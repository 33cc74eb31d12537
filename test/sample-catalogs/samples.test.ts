import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { tableFromIPC } from 'apache-arrow';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { eddingtonLuminosity } from '../../rules/physics/eddington.js';
import { EKER_2018 } from '../../rules/physics/mass-luminosity.js';
import { logLuminosityFromRadiusTeff, loggFromMassRadius } from '../../rules/physics/stellar.js';
import { toutZamsLuminosity } from '../../rules/physics/zams.js';
import {
  COLUMNS,
  DEFAULT_ROWS,
  DEFAULT_SEED,
  PLANT_COUNTS,
  makeSamples,
  starId,
  type PlantedEntry,
} from '../../sample-catalogs/make-samples.js';

const DIR = resolve(fileURLToPath(import.meta.url), '../../../sample-catalogs');
const COMMITTED = join(DIR, 'thistlewood-dr1');
const L_SUN_W = 3.828e26; // IAU 2015 Resolution B3 nominal solar luminosity

interface Truth {
  survey: string;
  seed: number;
  rows: number;
  planted: PlantedEntry[];
  stages: Record<string, number>;
  plantedCounts: Record<string, number>;
}

/** The CSV read the plain way: comment lines dropped, cells split on commas, empty = null. */
function readCsv(path: string): { header: string[]; rows: string[][] } {
  const lines = readFileSync(path, 'utf8').split('\n').filter((l) => l !== '' && !l.startsWith('#'));
  return { header: lines[0].split(','), rows: lines.slice(1).map((l) => l.split(',')) };
}

const num = (s: string): number | null => (s === '' ? null : Number(s));

let tmp = '';
beforeAll(async () => {
  tmp = mkdtempSync(join(tmpdir(), 'starsieve-samples-'));
  await makeSamples({ rows: DEFAULT_ROWS, seed: DEFAULT_SEED, out: join(tmp, 'thistlewood-dr1') });
});
afterAll(() => {
  if (tmp) rmSync(tmp, { recursive: true, force: true });
});

describe('committed sample catalogs', () => {
  it.each(['csv', 'arrow', 'truth.json'])('regenerating gives the committed .%s byte for byte', (ext) => {
    const fresh = readFileSync(join(tmp, `thistlewood-dr1.${ext}`));
    const committed = readFileSync(`${COMMITTED}.${ext}`);
    // On failure: run `npx tsx sample-catalogs/make-samples.ts` and commit the result.
    expect(fresh.equals(committed)).toBe(true);
  });

  const csv = readCsv(`${COMMITTED}.csv`);
  const truth = JSON.parse(readFileSync(`${COMMITTED}.truth.json`, 'utf8')) as Truth;
  const col = (name: string) => csv.header.indexOf(name);

  it('has the agreed header, ids and row count', () => {
    expect(csv.header).toEqual([...COLUMNS]);
    expect(csv.rows).toHaveLength(DEFAULT_ROWS);
    expect(truth.rows).toBe(DEFAULT_ROWS);
    expect(truth.seed).toBe(DEFAULT_SEED);
    csv.rows.forEach((r, i) => {
      expect(r).toHaveLength(COLUMNS.length);
      expect(r[0]).toBe(starId(i + 1));
    });
  });

  it('has the intended population and planted counts', () => {
    const stages: Record<string, number> = {};
    for (const r of csv.rows) stages[r[col('stage')]] = (stages[r[col('stage')]] ?? 0) + 1;
    expect(stages).toEqual({ MS: 2630, giant: 250, WD: 120 });
    expect(truth.stages).toEqual(stages);
    expect(truth.plantedCounts).toEqual(Object.fromEntries(PLANT_COUNTS));
    expect(truth.planted).toHaveLength(PLANT_COUNTS.reduce((a, [, n]) => a + n, 0));
    expect(new Set(truth.planted.map((p) => p.row)).size).toBe(truth.planted.length);
  });

  it('truth rows point at cells that hold the planted values', () => {
    for (const p of truth.planted) {
      const r = csv.rows[p.row - 1];
      expect(r[0]).toBe(p.id);
      for (const c of [p, ...(p.alsoChanged ?? [])]) {
        expect(num(r[col(c.column)]), `${p.id} ${c.column}`).toBe(c.planted);
        expect(c.original).not.toBe(c.planted);
      }
    }
  });

  it('the Arrow file holds the same table as the CSV, with real nulls', () => {
    const table = tableFromIPC(readFileSync(`${COMMITTED}.arrow`));
    expect(table.numRows).toBe(csv.rows.length);
    expect(table.schema.fields.map((f) => f.name)).toEqual([...COLUMNS]);
    let nulls = 0;
    for (const name of COLUMNS) {
      const vec = table.getChild(name)!;
      const c = col(name);
      const text = name === 'star_id' || name === 'stage';
      expect(String(vec.type)).toBe(text ? 'Utf8' : 'Float64');
      for (let i = 0; i < csv.rows.length; i++) {
        const want = text ? csv.rows[i][c] : num(csv.rows[i][c]);
        const got = vec.get(i);
        if (got === null) nulls++;
        if (got !== want) expect(got, `${name} row ${i + 1}`).toBe(want);
      }
    }
    // 20 blanked measurements (value + error) and no [Fe/H] for the 120 white dwarfs.
    expect(nulls).toBe(20 * 2 + 120);
  });

  describe('physics', () => {
    const plantedRows = new Map(truth.planted.map((p) => [p.row, p]));
    const stars = csv.rows.map((r, i) => ({
      row: i + 1,
      m: num(r[col('mass_Msun')])!,
      em: num(r[col('e_mass_Msun')])!,
      l: num(r[col('lum_Lsun')])!,
      el: num(r[col('e_lum_Lsun')])!,
      r: num(r[col('radius_Rsun')])!,
      t: num(r[col('teff_K')])!,
      g: num(r[col('logg')])!,
      stage: r[col('stage')],
    }));
    const clean = stars.filter((s) => !plantedRows.has(s.row));
    const ledd = (m: number, x: number) => eddingtonLuminosity(m, x);

    it('clean rows are self-consistent (Stefan-Boltzmann and logg from M, R)', () => {
      for (const s of clean) {
        expect(Math.abs(Math.log10(s.l) - logLuminosityFromRadiusTeff(s.r, s.t))).toBeLessThan(0.001);
        expect(Math.abs(s.g - loggFromMassRadius(s.m, s.r))).toBeLessThan(0.001);
      }
    });

    it('clean main-sequence rows sit on the relations and in the main-sequence logg band', () => {
      for (const s of clean.filter((x) => x.stage === 'MS')) {
        expect(s.g).toBeGreaterThanOrEqual(3.5);
        expect(s.g).toBeLessThanOrEqual(5.5);
        const eker = EKER_2018.logL(s.m);
        const resid = Math.log10(s.l) - (Number.isFinite(eker) ? eker : Math.log10(toutZamsLuminosity(s.m, 0.02)));
        if (Number.isFinite(eker)) expect(Math.abs(resid)).toBeLessThanOrEqual(0.15);
        else expect(resid).toBeGreaterThan(-0.01);
      }
      for (const s of clean.filter((x) => x.stage === 'giant')) expect(s.g).toBeLessThan(3.5);
      for (const s of clean.filter((x) => x.stage === 'WD')) expect(s.g).toBeGreaterThan(7.6);
    });

    it('no clean row comes near the X = 0.7 Eddington limit', () => {
      for (const s of clean) expect(s.l + 3 * s.el).toBeLessThan(0.8 * ledd(s.m, 0.7));
    });

    it('each planted row has the fault its kind promises', () => {
      for (const p of truth.planted) {
        const s = stars[p.row - 1];
        const orig = p.original!;
        switch (p.kind) {
          case 'watts':
            expect(s.l / (orig * L_SUN_W)).toBeCloseTo(1, 3);
            break;
          case 'erg':
            expect(s.l / (orig * L_SUN_W * 1e7)).toBeCloseTo(1, 3);
            break;
          case 'log-in-linear':
            expect(s.l).toBeCloseTo(Math.log10(orig), 3);
            expect(Math.abs(s.l)).toBeGreaterThan(0.7);
            break;
          case 'super-eddington':
            expect(s.stage).toBe('MS');
            expect(orig / s.m).toBeGreaterThanOrEqual(6);
            expect(orig / s.m).toBeLessThanOrEqual(10);
            expect(s.l - 3 * s.el).toBeGreaterThan(1.3 * ledd(s.m + 3 * s.em, 0));
            break;
          case 'eddington-warning':
            expect(s.stage).toBe('MS');
            expect(s.l - 3 * s.el).toBeGreaterThan(1.15 * ledd(s.m + 3 * s.em, 0.7));
            expect(s.l - s.el).toBeLessThan(0.9 * ledd(s.m, 0));
            break;
          case 'ml-faint':
          case 'ml-bright': {
            const resid = Math.log10(s.l) - EKER_2018.logL(s.m);
            expect(Math.abs(resid)).toBeGreaterThanOrEqual(1.1);
            expect(Math.sign(resid)).toBe(p.kind === 'ml-bright' ? 1 : -1);
            expect(Math.abs(Math.log10(s.l) - logLuminosityFromRadiusTeff(s.r, s.t))).toBeLessThan(0.001);
            expect(s.l + 3 * s.el).toBeLessThan(0.8 * ledd(s.m, 0.7));
            break;
          }
          case 'missing':
            expect(p.planted).toBeNull();
            expect(p.expect).toEqual([]);
            break;
        }
      }
    });
  });
});

describe('larger catalogs', () => {
  it('stream in blocks, with a partial last block, and stay consistent', async () => {
    const out = join(tmp, 'seven');
    const summary = await makeSamples({ rows: 7000, seed: 11, out });
    const csv = readCsv(`${out}.csv`);
    const truth = JSON.parse(readFileSync(`${out}.truth.json`, 'utf8')) as Truth;
    const table = tableFromIPC(readFileSync(`${out}.arrow`));
    expect(csv.rows).toHaveLength(7000);
    expect(table.numRows).toBe(7000);
    expect(csv.rows[6999][0]).toBe('TWC-007000');
    expect(summary.stages.MS + summary.stages.giant + summary.stages.WD).toBe(7000);
    expect(truth.planted.length).toBeGreaterThan(2 * 62);
    const lum = table.getChild('lum_Lsun')!;
    for (const p of truth.planted) {
      expect(csv.rows[p.row - 1][0]).toBe(p.id);
      if (p.column === 'lum_Lsun') expect(lum.get(p.row - 1)).toBe(p.planted);
    }
  });

  it('--no-plant gives the same stars without the planted errors', async () => {
    const out = join(tmp, 'clean');
    await makeSamples({ rows: DEFAULT_ROWS, seed: DEFAULT_SEED, out, plant: false });
    const clean = readCsv(`${out}.csv`).rows;
    const planted = readCsv(`${COMMITTED}.csv`).rows;
    const truth = JSON.parse(readFileSync(`${out}.truth.json`, 'utf8')) as Truth;
    expect(truth.planted).toEqual([]);
    const committed = JSON.parse(readFileSync(`${COMMITTED}.truth.json`, 'utf8')) as Truth;
    const touched = new Set(committed.planted.map((p) => p.row));
    for (let i = 0; i < clean.length; i++) {
      if (touched.has(i + 1)) expect(clean[i]).not.toEqual(planted[i]);
      else expect(clean[i]).toEqual(planted[i]);
    }
    // `original` is what the cell held before planting.
    const header = readCsv(`${out}.csv`).header;
    for (const p of committed.planted) {
      for (const c of [p, ...(p.alsoChanged ?? [])]) expect(num(clean[p.row - 1][header.indexOf(c.column)])).toBe(c.original);
    }
  });
});
