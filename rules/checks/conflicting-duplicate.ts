import { columnFinding, fmt, round6, rowFinding } from '../engine/findings.js';
import type { NumericQuantity } from '../engine/quantities.js';
import { usableValues } from '../engine/usable.js';
import type { Batch, ExpectedValue, Finding, QuantityColumn, Rule } from '../engine/types.js';
import { FingerprintSet, SET_FULL, growF32, idColumnOf } from './shared/fingerprints.js';

const ID = 'conflicting-duplicate';

/** Quantities compared between the rows of one id (stored as 32-bit floats per distinct id). */
const COMPARED: readonly NumericQuantity[] = ['mass', 'radius', 'teff', 'luminosity'];
const SHOWN_UNIT: Readonly<Partial<Record<NumericQuantity, string>>> = { mass: 'M_sun', radius: 'R_sun', teff: 'K', luminosity: 'L_sun' };
/**
 * An uncertainty excuses a difference only while it is below half its value: a value quoted as
 * 0.29 +- 0.30 M_sun says nothing about the star, and two rows that give 0.29 and 0.73 for it
 * disagree on what the star is whatever the error bars.
 */
const INFORMATIVE_RELATIVE_ERROR = 0.5;

/**
 * The same id with values that disagree: where a catalog repeats its host star once per planet,
 * the repeats must agree. Each repeat is compared with the first row of its id.
 */
export const conflictingDuplicate: Rule = {
  meta: {
    id: ID,
    title: 'Same id, conflicting values',
    severity: 'warning',
    stage: 'judge',
    needs: [],
    uses: [...COMPARED, 'id'],
    params: [
      {
        name: 'relTolerance',
        type: 'number',
        default: 0.25,
        min: 0,
        description: 'Mass, radius or luminosity of two rows of one id conflict when they differ by more than this fraction of the larger.',
      },
      { name: 'teffTolerance', type: 'number', default: 0.08, min: 0, description: 'The same for Teff (a fraction of the larger).' },
      {
        name: 'sigmas',
        type: 'number',
        default: 3,
        min: 0,
        description: 'A difference within this many combined uncertainties is not a conflict, when both uncertainties are below half their values.',
      },
      { name: 'maxIds', type: 'number', default: 5_000_000, min: 1000, description: 'Distinct ids tracked per input (about 70 bytes each); later new ids are counted, not tracked.' },
      { name: 'maxFindings', type: 'number', default: 1000, min: 1, description: 'Row findings per input; beyond them one column finding gives the count.' },
    ],
    references: [
      { cite: 'PHL Exoplanets Catalog PROVENANCE (../shared/reference-data): 137 hosts carry different masses on different rows (BD+20 2457: 2.80 and 10.83 M_sun)' },
      { cite: 'NASA Exoplanet Archive PSCompPars PROVENANCE: 169 hosts with more than one st_mass in the composite table' },
    ],
    doc: {
      catches:
        'Rows that repeat an earlier id with a mass, radius, luminosity or Teff that conflicts with the first row of that id: different by more than relTolerance (25 %; 8 % for Teff) and not within sigmas combined uncertainties (when those are informative, below half their values).',
      why:
        'Tables with one row per planet repeat the host star, and compilations take the host\'s parameters from each planet\'s paper: the same star then has two masses, and every planet mass derived from it inherits the choice. A factor of four between two rows (BD+20 2457: 2.80 and 10.83 M_sun) cannot be both right, whatever the error bars.',
      fires:
        'PHL: HIP 57274 with 0.29 +- 0.30 and 0.73 +- 0.05 M_sun; K2-38 with 2.24 +- 1.67 and 1.07 +- 0.05 M_sun; BD+20 2457 with 10.83 +- 22.96 and 2.80 +- 1.5 M_sun (warnings on the later rows, naming the first).',
      silent:
        'A host with M = 0.95 +- 0.05 on one row and 1.02 +- 0.05 on the next (7 %, within 3 sigma); a host repeated with identical values (duplicate-id and duplicate-row each give one note).',
      cautions:
        'Each repeat is compared with the first row of its id, not with every earlier row, and only where both rows have the value; the finding cannot tell which row is right. The 25 % tolerance is ours: composite tables legitimately mix estimates that differ by 10-20 %. Memory grows with the number of distinct ids (about 70 bytes each) up to maxIds; each input is judged on its own.',
    },
  },
  start(ctx) {
    const relTol = ctx.params.relTolerance as number;
    const teffTol = ctx.params.teffTolerance as number;
    const k = ctx.params.sigmas as number;
    const maxFindings = ctx.params.maxFindings as number;
    const ids = new FingerprintSet(ctx.params.maxIds as number);
    // The first row's value and uncertainty of each compared quantity, per distinct id.
    let stored: Float32Array[] = COMPARED.map(() => new Float32Array(1024).fill(NaN));
    let storedErr: Float32Array[] = COMPARED.map(() => new Float32Array(1024).fill(NaN));
    let conflicts = 0;
    let input = 0;
    let idColumn = '';
    const byQuantity = new Map<string, number>();

    function grow(n: number): void {
      if (n < stored[0].length) return;
      const size = stored[0].length * 2;
      const widen = (a: Float32Array) => {
        const out = growF32(a, size);
        out.fill(NaN, a.length);
        return out;
      };
      stored = stored.map(widen);
      storedErr = storedErr.map(widen);
    }

    /** Whether the first row's value a (error ea) and this row's b (error eb) of COMPARED[j] conflict. */
    function conflict(j: number, a: number, b: number, ea: number, eb: number): boolean {
      if (!(a > 0) || !(b > 0)) return false;
      const diff = Math.abs(a - b);
      if (diff <= (COMPARED[j] === 'teff' ? teffTol : relTol) * Math.max(a, b)) return false;
      return !(informative(a, b, ea, eb) && diff <= k * Math.hypot(ea, eb));
    }

    /** The finding for row i, a repeat of entry e whose quantities in `mask` conflict (`vals`: the batch's usable values). */
    function conflictFinding(batch: Batch, i: number, e: number, id: string, mask: number, vals: (Float64Array | null)[]): Finding {
      const first = ids.firstRow[e];
      const parts: string[] = [];
      const columns = [idColumn];
      const values: Record<string, number | string | null> = { [idColumn]: id, firstRow: first };
      let expected: ExpectedValue | null = null;
      for (let j = 0; j < COMPARED.length; j++) {
        if (!(mask & (1 << j))) continue;
        byQuantity.set(COMPARED[j], (byQuantity.get(COMPARED[j]) ?? 0) + 1);
        const col = batch.quantities[COMPARED[j]]!;
        const a = stored[j][e];
        const b = vals[j]![i];
        const ea = storedErr[j][e];
        const eb = errorOf(col.errLo, col.errHi, i);
        const why = informative(a, b, ea, eb)
          ? `${fmt(Math.abs(a - b) / Math.hypot(ea, eb), 2)} combined sigma`
          : ea >= INFORMATIVE_RELATIVE_ERROR * a || eb >= INFORMATIVE_RELATIVE_ERROR * b
            ? 'an uncertainty of half its value or more excuses nothing'
            : 'not both rows give an uncertainty';
        parts.push(`${col.column} = ${describe(COMPARED[j], col, b, eb)} here but ${describe(COMPARED[j], col, a, ea)} there (a factor ${fmt(Math.max(a, b) / Math.min(a, b), 3)}; ${why})`);
        columns.push(col.column);
        values[col.column] = round6(b);
        values[`${col.column} (row ${first})`] = round6(a);
        expected ??= { value: round6(a) ?? undefined, unit: col.unit };
      }
      return rowFinding(batch, i, {
        rule: ID,
        severity: 'warning',
        columns,
        values,
        expected,
        message: `${idColumn} \`${id}\` is also on row ${first} with other values: ${parts.join('; ')}. One star cannot have both`,
      });
    }

    return {
      check(batch, out, stats) {
        input = batch.input;
        const idCol = idColumnOf(batch, stats);
        if (!idCol) return;
        idColumn = idCol.column;
        const cols = COMPARED.map((q) => batch.quantities[q] ?? null);
        const vals = COMPARED.map((q) => usableValues(batch, q));
        for (let i = 0; i < batch.length; i++) {
          const id = idCol.values[i];
          if (id === null) {
            stats.skip('id missing');
            continue;
          }
          stats.checked++;
          const e = ids.addText(id, batch.firstRow + i);
          if (e === SET_FULL) continue;
          if (ids.added) {
            grow(e);
            for (let j = 0; j < COMPARED.length; j++) {
              const v = vals[j];
              if (!v) continue;
              stored[j][e] = v[i];
              storedErr[j][e] = errorOf(cols[j]!.errLo, cols[j]!.errHi, i);
            }
            continue;
          }
          // Which compared quantities conflict, as bits; the finding is only built when one does.
          let mask = 0;
          for (let j = 0; j < COMPARED.length; j++) {
            const v = vals[j];
            if (v && conflict(j, stored[j][e], v[i], storedErr[j][e], errorOf(cols[j]!.errLo, cols[j]!.errHi, i))) mask |= 1 << j;
          }
          if (mask === 0) continue;
          conflicts++;
          if (conflicts > maxFindings) {
            for (let j = 0; j < COMPARED.length; j++) if (mask & (1 << j)) byQuantity.set(COMPARED[j], (byQuantity.get(COMPARED[j]) ?? 0) + 1);
            continue;
          }
          out.push(conflictFinding(batch, i, e, id, mask, vals));
        }
      },
      finish(out) {
        if (conflicts > maxFindings) {
          out.push(
            columnFinding({
              input,
              rule: ID,
              severity: 'warning',
              columns: [idColumn],
              values: { conflicts, listed: maxFindings },
              message: `${conflicts} conflicting repeats of an id; the first ${maxFindings} are listed, ${conflicts - maxFindings} more are not`,
            }),
          );
        }
      },
      summary() {
        return { distinctIds: ids.size, conflicts, byQuantity: Object.fromEntries(byQuantity), untracked: ids.size >= ids.maxSize };
      },
    };
  },
};

/** Both uncertainties given and below half their values: only then may they excuse a difference. */
function informative(a: number, b: number, ea: number, eb: number): boolean {
  return ea > 0 && eb > 0 && ea < INFORMATIVE_RELATIVE_ERROR * a && eb < INFORMATIVE_RELATIVE_ERROR * b;
}

/** A value for the message as the column writes it: log L for a log column, else linear, with its error and unit. */
function describe(q: NumericQuantity, col: QuantityColumn, v: number, err: number): string {
  if (col.unit.startsWith('log')) return fmt(Math.log10(v), 3);
  return `${fmt(v)}${err > 0 ? ` +- ${fmt(err)}` : ''} ${SHOWN_UNIT[q]}`;
}

/** The larger of the lower and upper uncertainty magnitudes, NaN where neither is given. */
function errorOf(lo: Float64Array | null, hi: Float64Array | null, i: number): number {
  const a = lo ? lo[i] : NaN;
  const b = hi ? hi[i] : NaN;
  return a > b || b !== b ? a : b;
}
