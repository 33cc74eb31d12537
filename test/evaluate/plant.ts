/**
 * The errors the evaluation plants, one kind per row, into the raw cells of a catalog as a reader
 * delivered them: the number a curator's slip would have left in the file, in the column's own
 * declared unit. Each kind says which rows can carry it, what to write, and which finding names it.
 */
import type { NumericQuantity } from '../../rules/engine/quantities.js';
import type { Finding } from '../../rules/engine/types.js';
import { L_SUN_W, M_SUN_KG, R_SUN_M } from '../../rules/physics/constants.js';
import { eddingtonPerSolarMass } from '../../rules/physics/eddington.js';
import type { RawColumn } from '../../cli/readers/types.js';

export function shuffle<T>(a: T[], r: () => number): T[] {
  for (let i = a.length - 1; i > 0; i--) {
    const j = Math.floor(r() * (i + 1));
    [a[i], a[j]] = [a[j], a[i]];
  }
  return a;
}

/** A cell as written: a number, a text, or null when empty. */
export type Cell = number | string | null;

export function getCell(col: RawColumn, i: number): Cell {
  if (col.kind === 'text') return col.values[i] ?? null;
  if (col.kind === 'number') return col.nulls?.[i] === 1 || !Number.isFinite(col.values[i]) ? null : col.values[i];
  const k = col.oddIndex.indexOf(i);
  if (k >= 0) return col.oddText[k];
  return Number.isFinite(col.values[i]) ? col.values[i] : null;
}

/** Writes a cell in the column's own representation (a number as its shortest decimal in text columns). */
export function setCell(col: RawColumn, i: number, v: Cell): void {
  if (col.kind === 'text') {
    col.values[i] = v === null ? null : String(v);
    return;
  }
  if (col.kind === 'number') {
    const x = typeof v === 'number' ? v : v === null ? NaN : Number(v);
    col.values[i] = x;
    if (col.nulls) col.nulls[i] = Number.isFinite(x) ? 0 : 1;
    return;
  }
  const k = col.oddIndex.indexOf(i);
  if (k >= 0) {
    col.oddIndex.splice(k, 1);
    col.oddText.splice(k, 1);
  }
  if (typeof v === 'number' || v === null) {
    col.values[i] = v === null ? NaN : v;
    return;
  }
  // Text in a scanned column goes to the slow path, in row order.
  col.values[i] = NaN;
  let at = col.oddIndex.findIndex((x) => x > i);
  if (at < 0) at = col.oddIndex.length;
  col.oddIndex.splice(at, 0, i);
  col.oddText.splice(at, 0, v);
}

export function cloneColumn(col: RawColumn): RawColumn {
  if (col.kind === 'text') return { kind: 'text', values: col.values.slice() };
  if (col.kind === 'number') return { kind: 'number', values: col.values.slice(), nulls: col.nulls ? col.nulls.slice() : null };
  return { kind: 'scanned', values: col.values.slice(), oddIndex: col.oddIndex.slice(), oddText: col.oddText.slice() };
}

/** What a kind may read about a row of the unplanted catalog (canonical values; NaN = missing). */
export interface RowView {
  value(q: NumericQuantity): number;
  raw(q: NumericQuantity): number;
  /** The declared unit of the bound column, or null when the quantity is not bound. */
  unit(q: NumericQuantity | 'id'): string | null;
  id(): string | null;
}

/** One planted cell. `q` names the column written; `value` is what was written. */
export interface Plant {
  q: NumericQuantity | 'id';
  value: Cell;
  /** A second cell for kinds that touch two (a swap). */
  also?: { q: NumericQuantity; value: Cell };
  /** |log10 planted - log10 original| in canonical units, Infinity where the planted value is impossible as declared. */
  sizeDex: number;
  /** For sentinels: the column whose note must count it. */
  note?: NumericQuantity;
}

export interface Kind {
  id: string;
  label: string;
  /** Where the catalog can hold this kind at all (the columns it writes are bound in a usable unit). */
  applies(unit: (q: NumericQuantity | 'id') => string | null): boolean;
  /** The plant for this row, or null when the row cannot carry it. */
  plant(row: RowView, r: () => number): Plant | null;
  /** Whether a finding at the planted row names this error as its cause. */
  names(f: Finding, columnOf: (q: NumericQuantity) => string): boolean;
  /** The finding rule(s) that count for recall. */
  rules: readonly string[];
  /** Targets from the issue: the recall to reach, on which rows. */
  target?: { recall: number; on: 'all' | 'judgeable' | 'large' };
  /** For decimal shifts: the cell whose pinning makes the row judgeable. */
  judgedCell?: NumericQuantity;
  /** Reported by one note per column, so no row finding can name it (sentinels). */
  perColumn?: true;
}

const LOG_LSUN_W = Math.log10(L_SUN_W);
const isLog = (u: string | null) => u !== null && u.startsWith('log');
const linearOk = (u: string | null, canonical: string) => u === canonical;
const lumOk = (u: string | null) => u === 'solLum' || u === 'log(solLum)';
const dex = (a: number, b: number) => (a > 0 && b > 0 ? Math.abs(Math.log10(a) - Math.log10(b)) : Infinity);

function unitSlip(f: Finding, rule: string, units: readonly string[]): boolean {
  return f.rule === rule && units.includes(String(f.values.likelyUnit));
}

/** Luminosity written in another unit: `factor` dex above solar (W, erg/s). */
function luminosityUnit(id: string, label: string, offsetDex: number, units: readonly string[]): Kind {
  return {
    id,
    label,
    applies: (u) => lumOk(u('luminosity')),
    plant(row) {
      const raw = row.raw('luminosity');
      const l = row.value('luminosity');
      if (!(l > 0) || !Number.isFinite(raw)) return null;
      const log = isLog(row.unit('luminosity'));
      return { q: 'luminosity', value: log ? raw + offsetDex : raw * 10 ** offsetDex, sizeDex: offsetDex };
    },
    names: (f) => unitSlip(f, 'luminosity-unit-mixup', units),
    rules: ['luminosity-unit-mixup'],
    target: { recall: 0.99, on: 'all' },
  };
}

function decimal(q: 'luminosity' | 'mass', id: string, label: string): Kind {
  const canonical = q === 'mass' ? 'solMass' : 'solLum';
  return {
    id,
    label,
    applies: (u) => linearOk(u(q), canonical),
    plant(row, r) {
      const raw = row.raw(q);
      if (!(raw > 0)) return null;
      const s = r() < 0.5 ? 10 : 0.1;
      return { q, value: Number((raw * s).toPrecision(12)), sizeDex: 1 };
    },
    names: (f, columnOf) => f.rule === 'decimal-shift' && f.columns.includes(columnOf(q)),
    rules: ['decimal-shift'],
    target: { recall: 0.95, on: 'judgeable' },
    judgedCell: q,
  };
}

/** Every kind the evaluation plants, in the order the table lists them. */
export const KINDS: readonly Kind[] = [
  luminosityUnit('watts', 'luminosity in W', LOG_LSUN_W, ['W', 'log(W)']),
  luminosityUnit('erg', 'luminosity in erg/s', LOG_LSUN_W + 7, ['erg/s', 'log(erg/s)']),
  {
    id: 'log-linear',
    label: 'log L in a linear column, or linear L in a log column',
    applies: (u) => lumOk(u('luminosity')),
    plant(row) {
      const raw = row.raw('luminosity');
      const l = row.value('luminosity');
      if (!(l > 0) || !Number.isFinite(raw)) return null;
      if (isLog(row.unit('luminosity'))) {
        const v = 10 ** raw;
        // Read as a log, v means 10^v L_sun.
        return { q: 'luminosity', value: Number(v.toPrecision(6)), sizeDex: Math.abs(v - raw) };
      }
      const v = Math.log10(raw);
      return { q: 'luminosity', value: Number(v.toPrecision(6)), sizeDex: v > 0 ? dex(v, l) : Infinity };
    },
    names: (f) => unitSlip(f, 'luminosity-unit-mixup', ['log(solLum)', 'solLum']),
    rules: ['luminosity-unit-mixup'],
    target: { recall: 0.99, on: 'large' },
  },
  decimal('luminosity', 'decimal-L', 'luminosity off by one decimal place'),
  decimal('mass', 'decimal-M', 'mass off by one decimal place'),
  {
    id: 'kg',
    label: 'mass in kg',
    applies: (u) => linearOk(u('mass'), 'solMass'),
    plant(row) {
      const raw = row.raw('mass');
      if (!(raw > 0)) return null;
      return { q: 'mass', value: raw * M_SUN_KG, sizeDex: Math.log10(M_SUN_KG) };
    },
    names: (f) => unitSlip(f, 'mass-unit-mixup', ['kg']),
    rules: ['mass-unit-mixup'],
    target: { recall: 0.99, on: 'all' },
  },
  {
    id: 'km',
    label: 'radius in km',
    applies: (u) => linearOk(u('radius'), 'solRad'),
    plant(row) {
      const raw = row.raw('radius');
      if (!(raw > 0)) return null;
      return { q: 'radius', value: raw * (R_SUN_M / 1000), sizeDex: Math.log10(R_SUN_M / 1000) };
    },
    names: (f) => unitSlip(f, 'radius-unit-mixup', ['km']),
    rules: ['radius-unit-mixup'],
    target: { recall: 0.99, on: 'all' },
  },
  {
    id: 'swap-MR',
    label: 'mass and radius exchanged',
    applies: (u) => linearOk(u('mass'), 'solMass') && linearOk(u('radius'), 'solRad'),
    plant(row) {
      const m = row.raw('mass');
      const r = row.raw('radius');
      // Closer than 0.2 dex the rule never calls a swap, by design (swapped-columns MIN_SWAP_DEX).
      if (!(m > 0) || !(r > 0) || Math.abs(Math.log10(m / r)) < 0.2) return null;
      return { q: 'mass', value: r, also: { q: 'radius', value: m }, sizeDex: dex(m, r) };
    },
    names: (f) => f.rule === 'swapped-columns',
    rules: ['swapped-columns'],
  },
  {
    id: 'super-eddington',
    label: 'L ten times the X = 0 Eddington limit for its mass',
    applies: (u) => lumOk(u('luminosity')) && linearOk(u('mass'), 'solMass'),
    plant(row) {
      const m = row.value('mass');
      if (!(m > 0)) return null;
      const l = 10 * eddingtonPerSolarMass(0) * m;
      const value = isLog(row.unit('luminosity')) ? Math.log10(l) : l;
      return { q: 'luminosity', value: Number(value.toPrecision(6)), sizeDex: dex(l, row.value('luminosity')) };
    },
    names: (f) => f.rule === 'eddington-limit' && f.severity === 'error',
    rules: ['eddington-limit'],
    target: { recall: 0.99, on: 'all' },
  },
  {
    id: 'sentinel',
    label: 'a missing-value code (-999, -9999) in M, L, R, Teff or logg',
    applies: (u) => (['mass', 'luminosity', 'radius', 'teff', 'logg'] as const).some((q) => u(q) !== null),
    plant(row, r) {
      const qs = (['mass', 'luminosity', 'radius', 'teff', 'logg'] as const).filter((q) => row.unit(q) !== null && Number.isFinite(row.raw(q)));
      if (!qs.length) return null;
      const q = qs[Math.floor(r() * qs.length)];
      return { q, value: r() < 0.5 ? -999 : -9999, sizeDex: Infinity, note: q };
    },
    names: (f) => f.rule === 'sentinel-value',
    rules: ['sentinel-value'],
    perColumn: true,
  },
  {
    id: 'duplicate-id',
    label: "another row's identifier",
    applies: (u) => u('id') !== null,
    // The identifier is chosen by the caller (an earlier row's); see evaluate.ts.
    plant: () => null,
    names: (f) => f.rule === 'duplicate-id' || f.rule === 'conflicting-duplicate',
    rules: ['duplicate-id', 'conflicting-duplicate'],
  },
  {
    id: 'logg-si',
    label: 'logg in SI (2 dex low)',
    applies: (u) => u('logg') === 'log(cm.s-2)',
    plant(row) {
      const g = row.raw('logg');
      if (!Number.isFinite(g)) return null;
      return { q: 'logg', value: Number((g - 2).toPrecision(12)), sizeDex: 2 };
    },
    names: (f) => unitSlip(f, 'gravity-unit-mixup', ['log(m.s-2)']),
    rules: ['gravity-unit-mixup'],
  },
];
