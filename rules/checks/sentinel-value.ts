import { ConfigError } from '../engine/params.js';
import { NUMERIC_QUANTITIES, QUANTITY_INFO, type NumericQuantity } from '../engine/quantities.js';
import { markUnusable } from '../engine/usable.js';
import type { Batch, QuantityColumn, Rule } from '../engine/types.js';
import { STELLAR_LIMITS } from '../physics/classify.js';
import { ColumnTally, describeLabels, type ColumnTallyState } from './shared/column-tally.js';

/** What a run over one row range keeps for the end of the input. */
interface SentinelState {
  input: number | null;
  values: ColumnTallyState;
  errors: ColumnTallyState;
}

const ID = 'sentinel-value';

const DEFAULT_CODES = '-99,-99.9,-99.99,-999,-9999,-99999,99,99.9,99.99,999,9999,99999,1e20,-1e20,1e30,-1e30';
/** Fewer usable values than this in a batch column give no family to compare a code with. */
const FAMILY_MIN_VALUES = 20;
/** Quantities whose values are logs or magnitudes: their errors are in dex or mag. */
const LOG_LIKE: ReadonlySet<NumericQuantity> = new Set(['logg', 'feh', 'mbol']);
/** An error of this many dex or magnitudes is no measurement. */
const LOG_ERROR_CODE_MIN = 10;

function parseCodes(text: string): number[] {
  const codes = text
    .split(',')
    .map((s) => s.trim())
    .filter((s) => s !== '')
    .map(Number);
  if (codes.some((c) => !Number.isFinite(c))) throw new ConfigError(`parameter ${ID}.codes needs numbers separated by commas, got "${text}"`);
  return codes;
}

/** A code as a label: every digit kept (99999 is not 1e5), exponent form for the huge ones (1e+20). */
function codeLabel(x: number): string {
  return Math.abs(x) >= 1e6 ? x.toExponential() : String(x);
}

/** True where the value (canonical unit) is one no star or brown dwarf can have. */
function impossible(q: NumericQuantity, value: number): boolean {
  if (!Number.isFinite(value)) return true;
  if (QUANTITY_INFO[q].positive && value <= 0) return true;
  const lim = STELLAR_LIMITS[q];
  return lim !== undefined && (value < lim.min || value > lim.max);
}

/** The 99th percentile of the finite values of `v` that are not codes, or NaN for too few. */
function familyTop(v: Float64Array, raw: Float64Array, codes: ReadonlySet<number>): number {
  const keep = new Float64Array(v.length);
  let n = 0;
  for (let i = 0; i < v.length; i++) {
    const x = v[i];
    if (Number.isFinite(x) && !codes.has(raw[i])) keep[n++] = x;
  }
  if (n < FAMILY_MIN_VALUES) return NaN;
  const s = keep.subarray(0, n).sort();
  return s[Math.min(n - 1, Math.floor(0.99 * n))];
}

/**
 * Numbers that stand for "no value": -999, 99.99, 1e20 and the like, and runs of dots. A code is
 * read as missing only where it cannot be the quantity's value (outside what any star has), or is
 * far out of family for its column; an uncertainty written as a code only where it is as large as
 * its value. Everything else is a real number and is judged by the other rules.
 */
export const sentinelValue: Rule = {
  meta: {
    id: ID,
    title: 'Missing-value code stored as a number',
    severity: 'note',
    stage: 'screen',
    needs: [],
    uses: [...NUMERIC_QUANTITIES],
    params: [
      {
        name: 'codes',
        type: 'string',
        default: DEFAULT_CODES,
        description: 'Numbers that catalogs use for "no value", separated by commas. Runs of dots (`...`) are always codes.',
      },
      {
        name: 'familyFactor',
        type: 'number',
        default: 5,
        min: 1.5,
        description:
          'A positive code that a star could have is still read as missing when it is this many times the 99th percentile of the other values of its column in the batch.',
      },
    ],
    references: [
      { cite: 'common practice: -99, -999, -9999, 99.99, 9999 and 1e20 mark missing values in many survey tables' },
      { cite: 'NASA Exoplanet Archive and PHL PROVENANCE notes (../shared/reference-data): -99 K Teff errors are real values, not codes' },
    ],
    doc: {
      catches:
        'Cells holding a missing-value code (-999, -9999, -99.99, 99.99, 999, 9999, 1e20 ... and runs of dots such as `...`) in a bound column, value or uncertainty. One note per column, with the count per code and the first row; the cells are then treated as missing by every other rule.',
      why:
        'A -999 mass or a 9999 L_sun luminosity read as a number makes every physics rule fire on a value nobody measured, and averages and fits over the column go wrong. A code is only a code where it cannot be the value: outside what any star has (a negative mass, a logg of 99.99, a Teff of 99 K), or, for a value a star could have, at least familyFactor times the 99th percentile of the rest of its column (a Teff of 99999 K among M dwarfs). An uncertainty is a code only where it is as large as its value (or 10 dex or mag for logg, [Fe/H], M_bol).',
      fires:
        'mass_Msun = -999 on 12 rows and teff = 99999 in a column of 4000 K stars: one note for each column, "12 cells hold `-999`", and none of these cells reaches another rule.',
      silent:
        'st_tefferr2 = -99 on a 5500 K star: a 99 K uncertainty is a real one (NASA Exoplanet Archive, PHL). A mass of 99.99 M_sun in a catalog of O stars is a value, not a code.',
      cautions:
        'A code that is also a plausible value (99.99 M_sun, 999 L_sun, a parallax of 99.99 mas among nearby stars) is read as a value unless it is far above the rest of its column in the same batch; the family needs at least 20 other values in the batch. Zero is never a code here (value-out-of-range reports a zero distance). Codes are matched exactly as written, before unit conversion.',
    },
  },
  start(ctx) {
    const codes = new Set(parseCodes(ctx.params.codes as string));
    const absCodes = new Set([...codes].map(Math.abs));
    const smallestCode = Math.min(...absCodes);
    const familyFactor = ctx.params.familyFactor as number;
    const valueTally = new ColumnTally();
    const errorTally = new ColumnTally();
    let input = 0;
    /** Whether a batch (or an absorbed range's) told the input number. */
    let seen = false;

    /** Marks the code cells of one value column; returns nothing, counts into valueTally. */
    function screenValues(batch: Batch, q: NumericQuantity, col: QuantityColumn, rank: number): void {
      const raw = col.raw;
      const value = col.value;
      let top = NaN;
      let topKnown = false;
      for (let i = 0; i < batch.length; i++) {
        const r = raw[i];
        if (!(Math.abs(r) >= smallestCode) || !codes.has(r)) continue;
        let isCode = impossible(q, value[i]);
        if (!isCode && r > 0) {
          if (!topKnown) {
            top = familyTop(value, raw, codes);
            topKnown = true;
          }
          isCode = top > 0 && value[i] >= familyFactor * top;
        }
        if (!isCode) continue;
        markUnusable(batch, q, i);
        valueTally.add(col.column, codeLabel(r), batch.firstRow + i, batch.lines ? batch.lines[i] : null, null, rank);
      }
    }

    /** Error cells written as codes: set to missing (NaN) so no rule reads them as uncertainties. */
    function screenErrors(batch: Batch, q: NumericQuantity, col: QuantityColumn, rank: number): void {
      const w = col.errRaw;
      if (!w) return;
      const logLike = LOG_LIKE.has(q) || col.unit.startsWith('log');
      const mask = batch.unusable[q];
      for (const side of w.symmetric ? (['lo'] as const) : (['lo', 'hi'] as const)) {
        const written = side === 'lo' ? w.lo : w.hi;
        const column = side === 'lo' ? w.loColumn : w.hiColumn;
        if (!written || !column) continue;
        const mag = side === 'lo' ? col.errLo : col.errHi;
        for (let i = 0; i < batch.length; i++) {
          const e = written[i];
          if (!(Math.abs(e) >= smallestCode) || !absCodes.has(Math.abs(e))) continue;
          const v = col.value[i];
          const valueIsCode = mask !== undefined && mask[i] === 1;
          if (!valueIsCode) {
            if (!Number.isFinite(v)) continue;
            if (logLike ? Math.abs(e) < LOG_ERROR_CODE_MIN : !(mag !== null && mag[i] >= Math.abs(v))) continue;
          }
          if (side === 'lo' || w.symmetric) {
            if (col.errLo) col.errLo[i] = NaN;
            if (col.logErrLo) col.logErrLo[i] = NaN;
          }
          if (side === 'hi' || w.symmetric) {
            if (col.errHi) col.errHi[i] = NaN;
            if (col.logErrHi) col.logErrHi[i] = NaN;
          }
          errorTally.add(column, codeLabel(e), batch.firstRow + i, batch.lines ? batch.lines[i] : null, null, side === 'lo' ? rank : rank + 1);
        }
      }
    }

    return {
      check(batch, _out, stats) {
        input = batch.input;
        seen = true;
        stats.checked += batch.length;
        // Each column's loop position is its rank in the tallies, so the notes do not depend on the batches.
        NUMERIC_QUANTITIES.forEach((q, k) => {
          const col = batch.quantities[q];
          if (!col) return;
          screenValues(batch, q, col, k);
          screenErrors(batch, q, col, 2 * k);
        });
        // Runs of dots: the binder has already read them as missing.
        for (const p of batch.problems) {
          if (p.kind !== 'sentinel' || p.column === null || p.index < 0) continue;
          valueTally.add(p.column, p.text.trim(), batch.firstRow + p.index, batch.lines ? batch.lines[p.index] : null);
        }
      },
      finish(out) {
        const where = (c: { firstRow: number; firstLine: number | null }) => `first on row ${c.firstRow}${c.firstLine !== null ? ` (line ${c.firstLine})` : ''}`;
        for (const f of valueTally.notes(ID, 'note', input, (c) =>
          `${c.column}: ${c.total} ${c.total === 1 ? 'cell holds' : 'cells hold'} a missing-value code (${describeLabels(c.labels)}), ${where(c)}; read as missing, so no rule judges ${c.total === 1 ? 'it' : 'them'}. Leave such cells empty, or declare the code as the column's null value`,
        ))
          out.push(f);
        for (const f of errorTally.notes(ID, 'note', input, (c) =>
          `${c.column}: ${c.total} ${c.total === 1 ? 'uncertainty is' : 'uncertainties are'} a missing-value code (${describeLabels(c.labels)}), ${where(c)}; read as no uncertainty`,
        ))
          out.push(f);
      },
      summary() {
        return { codes: [...codes], valueCells: valueTally.total(), uncertaintyCells: errorTally.total() };
      },
      save(): SentinelState {
        return { input: seen ? input : null, values: valueTally.save(), errors: errorTally.save() };
      },
      absorb(state, shift) {
        const s = state as SentinelState;
        if (s.input !== null) {
          input = s.input;
          seen = true;
        }
        valueTally.absorb(s.values, shift);
        errorTally.absorb(s.errors, shift);
      },
    };
  },
};
