import { columnFinding, fmt, round6, rowFinding } from '../engine/findings.js';
import { NUMERIC_QUANTITIES, QUANTITY_INFO } from '../engine/quantities.js';
import { usableValues } from '../engine/usable.js';
import type { Batch, Finding, FindingSink, QuantityColumn, Rule, Severity, Suggestion } from '../engine/types.js';
import { ColumnTally, type ColumnTallyState } from './shared/column-tally.js';

/** Rows with each problem in one column, and where the column comes among the others. */
interface ProblemCounts {
  column: string;
  /** Per Problem. */
  rows: number[];
  rank: number;
  firstRow: number;
  /** Order among columns met first on the same row. */
  seq: number;
}

/** What a run over one row range keeps for the end of the input. */
interface UncertaintyState {
  input: number | null;
  zeros: ColumnTallyState;
  /** In order; `seq` is dropped, the order of the list says it. */
  counts: Omit<ProblemCounts, 'seq'>[];
  /** Rows listed while checking, per column and problem (at most the cap each), for the merge's filter. */
  listed: [string, number[]][];
}

/**
 * How a finding of a problem names its columns, so a filter can tell a finding's problem from the
 * finding: one column (the sign problems, which exclude each other on a column), the pair with the
 * lower column first (swapped), or the value then its error column (larger than the value).
 */
function shapeOf(p: number): 'single' | 'swapped' | 'larger' {
  return p === Problem.Swapped ? 'swapped' : p === Problem.LargerThanValue ? 'larger' : 'single';
}

const ID = 'uncertainty-invalid';

/** What can be wrong with one row's uncertainty of one quantity. */
const Problem = {
  NegativeSymmetric: 0,
  LowerWrongSign: 1,
  UpperWrongSign: 2,
  Swapped: 3,
  LargerThanValue: 4,
} as const;
type Problem = (typeof Problem)[keyof typeof Problem];

const PROBLEM_TEXT: readonly string[] = [
  'negative symmetric uncertainties',
  'lower uncertainties with the wrong sign',
  'negative upper uncertainties',
  'lower and upper uncertainties swapped',
  'uncertainties larger than their value',
];
const PROBLEM_SEVERITY: readonly Severity[] = ['error', 'warning', 'warning', 'warning', 'warning'];

/**
 * Uncertainty columns judged on what the catalog wrote, signs included (QuantityColumn.errRaw): a
 * symmetric error must be positive, a lower error must carry its column's sign convention (NASA
 * `err2` and PHL `_ERROR_MIN` store it negative) and an upper error must be positive; an error that
 * reaches below zero for a quantity that must be positive says the value is not constrained.
 */
export const uncertaintyInvalid: Rule = {
  meta: {
    id: ID,
    title: 'Uncertainty that cannot be right',
    severity: 'warning',
    stage: 'judge',
    needs: [],
    uses: [...NUMERIC_QUANTITIES, 'id'],
    params: [
      {
        name: 'maxRowsPerColumn',
        type: 'number',
        default: 50,
        min: 1,
        description: 'Rows listed per column and problem; beyond them one column finding gives the count.',
      },
    ],
    references: [
      { cite: 'JCGM 100:2008 (GUM), section 2.2: an uncertainty is a non-negative parameter of the dispersion of a measured value' },
      { cite: 'NASA Exoplanet Archive column definitions: err1 upper (>= 0), err2 lower (stored <= 0)', note: 'see ../shared/reference-data/nasa-exoplanet-archive/PROVENANCE.md' },
    ],
    doc: {
      catches:
        'Negative symmetric uncertainties (error); lower uncertainties with the sign their column does not use, negative upper uncertainties, lower and upper swapped (both signs reversed) (warnings); a lower or symmetric uncertainty larger than a value that must be positive (warning); uncertainties of exactly zero (one note per column, with the count).',
      why:
        'Uncertainties weigh every consistency check: a sign slip usually marks a pasted or misaligned cell, swapped lower and upper errors invert the asymmetry of a posterior, and an error larger than the value (M = 10.8 +- 23 M_sun) means the value is not constrained, so any rule that trusts it is misled. A zero error makes every sigma test infinitely strict; archives write 0.00 where the source gave no uncertainty at the quoted precision, which is worth knowing but not wrong.',
      fires:
        'e_mass = -0.05 (a symmetric error, error). S_MASS_ERROR_MIN = +0.2 where the column stores lower errors as negative numbers (warning). S_MASS = 10.83 with errors -22.96/+22.96 (warning: the value is not constrained).',
      silent:
        'st_tefferr2 = -99 with st_tefferr1 = 99 (a real 99 K uncertainty, stored negative by the archive convention); a log L error of 0.4 dex (errors in dex may exceed the value in linear space).',
      cautions:
        'The sign convention of a lower-error column is the binder\'s (from the column name, or all negative in the sample); a column of magnitudes with a few negative cells gets each negative cell listed. The comparison with the value is made on the lower side only, in the canonical unit, and only for quantities that must be positive with a linear unit: asymmetric upper errors larger than the value occur in honest log-normal posteriors. Cells that sentinel-value read as missing-value codes are not judged.',
    },
  },
  start(ctx) {
    const cap = ctx.params.maxRowsPerColumn as number;
    const zeros = new ColumnTally();
    /** Rows per (column, problem), for the cap and the column summary. */
    const counts = new Map<string, ProblemCounts>();
    let input = 0;
    /**
     * Position of the column being judged in the loop over a batch's columns: columns are reported
     * in loop order, then by first row, the order of one pass over one batch, whatever the batches.
     */
    let rank = 0;
    let seq = 0;
    let seen = false;

    function count(column: string, p: Problem, row: number): number {
      let c = counts.get(column);
      if (!c) {
        c = { column, rows: [0, 0, 0, 0, 0], rank, firstRow: row, seq: seq++ };
        counts.set(column, c);
      }
      return ++c.rows[p];
    }

    /** The columns with problems in order (see `rank`). */
    function countsInOrder(): ProblemCounts[] {
      return [...counts.values()].sort((a, b) => a.rank - b.rank || a.firstRow - b.firstRow || a.seq - b.seq);
    }

    /** Rows listed per `column\0problem`, up to the cap: what a later range's filter needs. */
    const listed = new Map<string, number[]>();

    function report(batch: Batch, i: number, out: FindingSink, column: string, p: Problem, parts: { columns: string[]; values: Finding['values']; message: string; expected?: Finding['expected']; suggestion?: Suggestion | null }): void {
      if (count(column, p, batch.firstRow + i) > cap) return;
      const key = `${column}\0${p}`;
      const rows = listed.get(key);
      if (rows) rows.push(batch.firstRow + i);
      else listed.set(key, [batch.firstRow + i]);
      out.push(rowFinding(batch, i, { rule: ID, severity: PROBLEM_SEVERITY[p], ...parts }));
    }

    function judgeColumn(batch: Batch, out: FindingSink, col: QuantityColumn, value: Float64Array, mustBePositive: boolean): number {
      const w = col.errRaw!;
      const lo = w.lo;
      const hi = w.symmetric ? null : w.hi;
      // Cells blanked by sentinel-value (missing-value codes) are NaN in the converted errors.
      const loMag = col.errLo;
      const hiMag = col.errHi;
      let judged = 0;
      for (let i = 0; i < batch.length; i++) {
        let a = lo ? lo[i] : NaN;
        let b = hi ? hi[i] : NaN;
        if (loMag && loMag[i] !== loMag[i]) a = NaN;
        if (hiMag && hiMag[i] !== hiMag[i]) b = NaN;
        if (a !== a && b !== b) continue;
        judged++;
        rowsWithErrors[i] = 1;
        const line = batch.lines ? batch.lines[i] : null;
        const row = batch.firstRow + i;
        if (w.symmetric) {
          if (a === 0) zeros.add(w.loColumn!, 'zero', row, line, null, rank);
          else if (a < 0) {
            report(batch, i, out, w.loColumn!, Problem.NegativeSymmetric, {
              columns: [w.loColumn!],
              values: { [w.loColumn!]: round6(a), [col.column]: round6(col.raw[i]) },
              message: `${w.loColumn} = ${fmt(a)}: a symmetric uncertainty of ${col.column} cannot be negative`,
              expected: { min: 0, unit: col.unit },
              suggestion: { column: w.loColumn!, value: -a, unit: col.unit, text: `${fmt(-a)} (the magnitude)` },
            });
          }
        } else {
          if (a === 0) zeros.add(w.loColumn!, 'zero', row, line, null, rank);
          if (b === 0) zeros.add(w.hiColumn!, 'zero', row, line, null, rank);
          const loWrong = w.loStoredNegative ? a > 0 : a < 0;
          const hiWrong = b < 0;
          const loCol = w.loColumn ?? '';
          const hiCol = w.hiColumn ?? '';
          const values = { [loCol]: round6(a), [hiCol]: round6(b), [col.column]: round6(col.raw[i]) };
          if (loWrong && hiWrong && w.loStoredNegative) {
            report(batch, i, out, loCol, Problem.Swapped, {
              columns: [loCol, hiCol],
              values,
              message: `${loCol} = ${fmt(a)} and ${hiCol} = ${fmt(b)}: the lower uncertainty is positive and the upper negative, so the two look swapped`,
              expected: { max: 0, unit: col.unit },
              suggestion: { column: loCol, value: b, unit: col.unit, text: `swap them: ${loCol} = ${fmt(b)}, ${hiCol} = ${fmt(a)}` },
            });
          } else if (loWrong) {
            report(batch, i, out, loCol, Problem.LowerWrongSign, {
              columns: [loCol],
              values,
              message: w.loStoredNegative
                ? `${loCol} = ${fmt(a)} is positive, but the column stores lower uncertainties as negative numbers`
                : `${loCol} = ${fmt(a)} is negative in a column of lower uncertainties written as magnitudes`,
              expected: w.loStoredNegative ? { max: 0, unit: col.unit } : { min: 0, unit: col.unit },
              suggestion: { column: loCol, value: -a, unit: col.unit, text: `${fmt(-a)} (the sign of the column)` },
            });
          } else if (hiWrong) {
            report(batch, i, out, hiCol, Problem.UpperWrongSign, {
              columns: [hiCol],
              values,
              message: `${hiCol} = ${fmt(b)}: an upper uncertainty of ${col.column} cannot be negative`,
              expected: { min: 0, unit: col.unit },
              suggestion: { column: hiCol, value: -b, unit: col.unit, text: `${fmt(-b)} (the magnitude)` },
            });
          }
        }
        // A lower error larger than a value that must be positive: the interval reaches below zero.
        const v = value[i];
        const e = loMag ? loMag[i] : NaN;
        if (mustBePositive && v > 0 && e > v) {
          const errCol = w.loColumn ?? col.column;
          report(batch, i, out, errCol, Problem.LargerThanValue, {
            columns: [col.column, errCol],
            values: { [col.column]: round6(col.raw[i]), [errCol]: round6(lo ? lo[i] : NaN), relativeError: round6(e / v) },
            message: `${col.column} = ${fmt(col.raw[i])} with a ${w.symmetric ? '' : 'lower '}uncertainty of ${fmt(e)} (${fmt((100 * e) / v, 3)} % of the value): the interval reaches below zero, so the value is not constrained; check the value and its error`,
            expected: { max: round6(v) ?? undefined, unit: col.unit },
          });
        }
      }
      return judged;
    }

    let rowsWithErrors = new Uint8Array(0);

    return {
      check(batch, out, stats) {
        input = batch.input;
        seen = true;
        if (rowsWithErrors.length < batch.length) rowsWithErrors = new Uint8Array(batch.length);
        else rowsWithErrors.fill(0, 0, batch.length);
        let columns = 0;
        for (let k = 0; k < NUMERIC_QUANTITIES.length; k++) {
          const q = NUMERIC_QUANTITIES[k];
          const col = batch.quantities[q];
          if (!col?.errRaw) continue;
          columns++;
          rank = k;
          // Linear values only: for a log column the converted errors come from dex and never say
          // anything about the value reaching zero.
          const mustBePositive = QUANTITY_INFO[q].positive && !col.unit.startsWith('log');
          judgeColumn(batch, out, col, usableValues(batch, q)!, mustBePositive);
        }
        if (columns === 0) {
          stats.skip('no uncertainty column bound', batch.length);
          return;
        }
        let with_ = 0;
        for (let i = 0; i < batch.length; i++) with_ += rowsWithErrors[i];
        stats.checked += with_;
        if (batch.length > with_) stats.skip('no uncertainty given', batch.length - with_);
      },
      finish(out) {
        for (const { column, rows: c } of countsInOrder()) {
          for (let p = 0; p < c.length; p++) {
            if (c[p] <= cap) continue;
            out.push(
              columnFinding({
                input,
                rule: ID,
                severity: PROBLEM_SEVERITY[p],
                columns: [column],
                values: { rows: c[p], rowsListed: cap },
                message: `${column}: ${c[p]} rows have ${PROBLEM_TEXT[p]}; the first ${cap} are listed, ${c[p] - cap} more are not${p === Problem.LowerWrongSign || p === Problem.NegativeSymmetric ? '. If the whole column is written that way, bind it with the role it has (e.g. --bind COLUMN=QUANTITY.errLo)' : ''}`,
              }),
            );
          }
        }
        for (const f of zeros.notes(ID, 'note', input, (z) =>
          `${z.column}: ${z.total} ${z.total === 1 ? 'uncertainty is' : 'uncertainties are'} exactly 0, first on row ${z.firstRow}; a zero error usually means none was given at the quoted precision, and makes every sigma test on ${z.total === 1 ? 'that row' : 'those rows'} as strict as it can be`,
        ))
          out.push(f);
      },
      summary() {
        const byProblem: Record<string, number> = {};
        for (const { rows: c } of countsInOrder()) for (let p = 0; p < c.length; p++) if (c[p] > 0) byProblem[PROBLEM_TEXT[p]] = (byProblem[PROBLEM_TEXT[p]] ?? 0) + c[p];
        return { byProblem, zeroUncertainties: zeros.total() };
      },
      save(): UncertaintyState {
        return {
          input: seen ? input : null,
          zeros: zeros.save(),
          counts: countsInOrder().map(({ column, rows, rank: r, firstRow }) => ({ column, rows, rank: r, firstRow })),
          listed: [...listed],
        };
      },
      absorb(state, shift) {
        const s = state as UncertaintyState;
        if (s.input !== null) {
          input = s.input;
          seen = true;
        }
        zeros.absorb(s.zeros, shift);
        // The counts merge exactly, and so the column findings of the cap. The range listed up to
        // the cap of its own rows while checking; those past what the ranges before it left of
        // the cap are the rows one pass would not have listed, and the filter drops them.
        for (const c of s.counts) {
          const mine = counts.get(c.column);
          if (!mine) counts.set(c.column, { column: c.column, rows: [...c.rows], rank: c.rank, firstRow: c.firstRow + shift.rows, seq: seq++ });
          else for (let p = 0; p < c.rows.length; p++) mine.rows[p] += c.rows[p];
        }
        const drop = new Set<string>();
        for (const [key, rows] of s.listed) {
          const mine = listed.get(key) ?? [];
          listed.set(key, mine);
          const [column, p] = key.split('\0');
          for (const r of rows) {
            if (mine.length < cap) mine.push(r + shift.rows);
            else drop.add(`${r + shift.rows}\0${column}\0${shapeOf(Number(p))}`);
          }
        }
        if (drop.size === 0) return;
        return (f: Finding) => {
          if (f.row === null) return true;
          const one = f.columns.length === 1 ? `${f.row}\0${f.columns[0]}\0single` : null;
          const candidates = one ? [one] : [`${f.row}\0${f.columns[0]}\0swapped`, `${f.row}\0${f.columns[1]}\0larger`];
          for (const c of candidates) if (drop.delete(c)) return false;
          return true;
        };
      },
    };
  },
};
