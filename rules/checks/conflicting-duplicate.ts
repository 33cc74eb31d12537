import { columnFinding, fmt, round6, rowFindingAt } from '../engine/findings.js';
import type { NumericQuantity } from '../engine/quantities.js';
import { usableValues } from '../engine/usable.js';
import type { ExpectedValue, Finding, Rule } from '../engine/types.js';
import { Fingerprint, FirstByRow, KeyLog, growF32, idColumnOf, type KeyEvent, type KeyLogState } from './shared/fingerprints.js';

/** What a run over one row range keeps for the end of the input. */
interface ConflictingDuplicateState {
  keys: KeyLogState;
  /** Null when the range met no batch. */
  input: number | null;
  /** The id column and compared columns of the range's last batch with an id column; null when none had one. */
  ids: { idColumn: string; bound: ({ column: string; unit: string } | null)[] } | null;
}

const ID = 'conflicting-duplicate';

/** Quantities compared between the rows of one id (the first row's kept as 32-bit floats). */
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
        'Each repeat is compared with the first row of its id, not with every earlier row, and only where both rows have the value; the finding cannot tell which row is right. The 25 % tolerance is ours: composite tables legitimately mix estimates that differ by 10-20 %. Each input is judged on its own. The rows are kept in temporary files and compared at the end of the input, so memory does not grow with the rows, and the findings come at the end of the input, after the row findings of the other rules.',
    },
  },
  start(ctx) {
    const relTol = ctx.params.relTolerance as number;
    const teffTol = ctx.params.teffTolerance as number;
    const k = ctx.params.sigmas as number;
    const maxFindings = ctx.params.maxFindings as number;
    const J = COMPARED.length;
    // Per row: the compared values (usable) and their uncertainties, after the key.
    const keys = new KeyLog(ctx.spill, 2 * J);
    const fp = new Fingerprint();
    const extras = new Float64Array(2 * J);
    let conflicts = 0;
    let input = 0;
    let seen = false;
    let idColumn = '';
    let idSeen = false;
    /** The column and unit each compared quantity is read from in this input, null where unbound. */
    const bound: ({ column: string; unit: string } | null)[] = COMPARED.map(() => null);
    const byQuantity = new Map<string, number>();

    /** Whether the first row's value a (error ea) and this row's b (error eb) of COMPARED[j] conflict. */
    function conflict(j: number, a: number, b: number, ea: number, eb: number): boolean {
      if (!(a > 0) || !(b > 0)) return false;
      const diff = Math.abs(a - b);
      if (diff <= (COMPARED[j] === 'teff' ? teffTol : relTol) * Math.max(a, b)) return false;
      return !(informative(a, b, ea, eb) && diff <= k * Math.hypot(ea, eb));
    }

    /** The finding for a repeat whose quantities in `mask` conflict with its id's first row (`first`: values, then errors). */
    function conflictFinding(e: KeyEvent, first: Float32Array, mask: number): Finding {
      const id = e.text!;
      const r = e.records;
      const parts: string[] = [];
      const columns = [idColumn];
      const values: Record<string, number | string | null> = { [idColumn]: id, firstRow: e.firstRow };
      let expected: ExpectedValue | null = null;
      for (let j = 0; j < J; j++) {
        if (!(mask & (1 << j))) continue;
        const col = bound[j]!;
        const a = first[j];
        const ea = first[J + j];
        const b = r[e.at + 4 + j];
        const eb = r[e.at + 4 + J + j];
        const why = informative(a, b, ea, eb)
          ? `${fmt(Math.abs(a - b) / Math.hypot(ea, eb), 2)} combined sigma`
          : ea >= INFORMATIVE_RELATIVE_ERROR * a || eb >= INFORMATIVE_RELATIVE_ERROR * b
            ? 'an uncertainty of half its value or more excuses nothing'
            : 'not both rows give an uncertainty';
        parts.push(`${col.column} = ${describe(COMPARED[j], col.unit, b, eb)} here but ${describe(COMPARED[j], col.unit, a, ea)} there (a factor ${fmt(Math.max(a, b) / Math.min(a, b), 3)}; ${why})`);
        columns.push(col.column);
        values[col.column] = round6(b);
        values[`${col.column} (row ${e.firstRow})`] = round6(a);
        expected ??= { value: round6(a) ?? undefined, unit: col.unit };
      }
      const line = r[e.at + 3];
      return rowFindingAt(input, r[e.at + 2], line === line ? line : null, id, {
        rule: ID,
        severity: 'warning',
        columns,
        values,
        expected,
        message: `${idColumn} \`${id}\` is also on row ${e.firstRow} with other values: ${parts.join('; ')}. One star cannot have both`,
      });
    }

    return {
      check(batch, _out, stats) {
        input = batch.input;
        seen = true;
        const idCol = idColumnOf(batch, stats);
        if (!idCol) return;
        idColumn = idCol.column;
        idSeen = true;
        const cols = COMPARED.map((q) => batch.quantities[q] ?? null);
        cols.forEach((c, j) => (bound[j] = c ? { column: c.column, unit: c.unit } : null));
        const vals = COMPARED.map((q) => usableValues(batch, q));
        const lines = batch.lines;
        for (let i = 0; i < batch.length; i++) {
          const id = idCol.values[i];
          if (id === null) {
            stats.skip('id missing');
            continue;
          }
          stats.checked++;
          for (let j = 0; j < J; j++) {
            const v = vals[j];
            extras[j] = v ? v[i] : NaN;
            extras[J + j] = v ? errorOf(cols[j]!.errLo, cols[j]!.errHi, i) : NaN;
          }
          fp.reset().text(id).done();
          keys.add(fp.hi, fp.lo, batch.firstRow + i, lines ? lines[i] : null, id, extras);
        }
      },
      finish(out) {
        const listed = new FirstByRow(maxFindings);
        // The first row's values of each id in the partition being replayed, as 32-bit floats.
        let firstValues: Float32Array = new Float32Array(0);
        const one = new Float32Array(2 * J);
        keys.replay((e) => {
          const base = e.entry * 2 * J;
          if (e.first) {
            if (base + 2 * J > firstValues.length) firstValues = growF32(firstValues, Math.max(1024, 2 * (base + 2 * J)));
            for (let f = 0; f < 2 * J; f++) firstValues[base + f] = e.records[e.at + 4 + f];
            return;
          }
          let mask = 0;
          for (let j = 0; j < J; j++) {
            if (bound[j] && conflict(j, firstValues[base + j], e.records[e.at + 4 + j], firstValues[base + J + j], e.records[e.at + 4 + J + j])) mask |= 1 << j;
          }
          if (mask === 0) return;
          conflicts++;
          for (let j = 0; j < J; j++) if (mask & (1 << j)) byQuantity.set(COMPARED[j], (byQuantity.get(COMPARED[j]) ?? 0) + 1);
          one.set(firstValues.subarray(base, base + 2 * J));
          listed.offer(e.records[e.at + 2], () => conflictFinding(e, one, mask));
        });
        for (const f of listed.list()) out.push(f);
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
        return { distinctIds: keys.distinct, conflicts, byQuantity: Object.fromEntries(byQuantity) };
      },
      save(): ConflictingDuplicateState {
        return { keys: keys.save(), input: seen ? input : null, ids: idSeen ? { idColumn, bound: bound.map((b) => (b ? { ...b } : null)) } : null };
      },
      absorb(state, shift) {
        const s = state as ConflictingDuplicateState;
        keys.absorb(s.keys, shift);
        if (s.input !== null) {
          input = s.input;
          seen = true;
        }
        if (s.ids) {
          idColumn = s.ids.idColumn;
          s.ids.bound.forEach((b, j) => (bound[j] = b));
          idSeen = true;
        }
      },
    };
  },
};

/** Both uncertainties given and below half their values: only then may they excuse a difference. */
function informative(a: number, b: number, ea: number, eb: number): boolean {
  return ea > 0 && eb > 0 && ea < INFORMATIVE_RELATIVE_ERROR * a && eb < INFORMATIVE_RELATIVE_ERROR * b;
}

/** A value for the message as the column writes it: log L for a log column, else linear, with its error and unit. */
function describe(q: NumericQuantity, unit: string, v: number, err: number): string {
  if (unit.startsWith('log')) return fmt(Math.log10(v), 3);
  return `${fmt(v)}${err > 0 ? ` +- ${fmt(err)}` : ''} ${SHOWN_UNIT[q]}`;
}

/** The larger of the lower and upper uncertainty magnitudes, NaN where neither is given. */
function errorOf(lo: Float64Array | null, hi: Float64Array | null, i: number): number {
  const a = lo ? lo[i] : NaN;
  const b = hi ? hi[i] : NaN;
  return a > b || b !== b ? a : b;
}
