import { problemFindings } from '../engine/findings.js';
import type { Rule } from '../engine/types.js';
import { ColumnTally, type ColumnTallyState } from './shared/column-tally.js';

/** What a run over one row range keeps for the end of the input. */
interface UnparseableState {
  input: number | null;
  lenient: ColumnTallyState;
}

const ID = 'unparseable-value';

/** The form of a leniently read cell, from the binder's message. */
function leniencyForm(message: string): string {
  return message.includes('Fortran') ? 'Fortran D exponent' : 'thousands separators';
}

/** Text where a number belongs: the cell is treated as missing, and said so, never dropped silently. */
export const unparseableValue: Rule = {
  meta: {
    id: ID,
    title: 'Text in a numeric column',
    severity: 'warning',
    stage: 'screen',
    needs: [],
    uses: ['id'],
    params: [],
    references: [
      { cite: 'common practice: a linter must account for every cell it could not read' },
      { cite: 'ISO/IEC 1539 (Fortran): the D exponent letter of double-precision constants, as in 1.0D+26' },
    ],
    doc: {
      catches:
        'Cells of a bound numeric column that are not numbers (e.g. `1,23`, `n/a`, `12..5`), one warning each with its line. Two forms that are unambiguous numbers are read, with one note per column: thousands separators (`51,230` = 51230) and Fortran exponents (`1.0D+26`). Empty cells and the usual null spellings (NaN, null, None, --) are missing values, not findings; runs of dots (`...`) are missing-value codes, reported by sentinel-value.',
      why: 'A value that cannot be read is a value no other rule can check. Listing each one, with its line, keeps every row accounted for; saying which cells were read in a lenient way lets the curator confirm the reading.',
      fires: 'mass_Msun = "0.8?" on line 17 (warning); lum = "1,23" (a decimal comma, warning); teff = "51,230" (read as 51230, one note for the column).',
      silent: 'mass_Msun empty, or "NaN", or "...".',
      cautions:
        'A comma is ambiguous: `1,234` is 1234 with a thousands separator or 1.234 with a decimal comma. It is read as thousands only where the groups after the first are of exactly three digits and no cell of the same column in the batch has a comma that cannot be a thousands separator (`1,23`, `0,5`); in a column that writes decimal commas every comma cell stays unparseable rather than being guessed. Only columns bound to a quantity are parsed; other columns are never read as numbers.',
    },
  },
  start() {
    const lenient = new ColumnTally();
    let input = 0;
    let seen = false;
    return {
      check(batch, out, stats) {
        input = batch.input;
        seen = true;
        stats.checked += batch.length;
        problemFindings(batch, 'unparseable', ID, 'warning', out);
        for (const p of batch.problems) {
          if (p.kind !== 'lenient' || p.column === null || p.index < 0) continue;
          lenient.add(p.column, leniencyForm(p.message), batch.firstRow + p.index, batch.lines ? batch.lines[p.index] : null, p.message);
        }
      },
      finish(out) {
        for (const f of lenient.notes(ID, 'note', input, (c) => {
          const forms = [...c.labels.keys()];
          const example = c.example ? `; first on row ${c.firstRow}: ${c.example.slice(c.column.length + 2)}` : '';
          return `${c.column}: ${c.total} ${c.total === 1 ? 'cell was read as a number' : 'cells were read as numbers'} although written with ${[...c.labels].map(([form, n]) => `${form} (${n})`).join(' or ')}${example}. Check that ${forms.includes('thousands separators') ? 'the commas are thousands separators, not decimal commas' : 'the D exponents are powers of ten'}, and write plain numbers`;
        }))
          out.push(f);
      },
      summary() {
        return { cellsReadLeniently: lenient.total() };
      },
      save(): UnparseableState {
        return { input: seen ? input : null, lenient: lenient.save() };
      },
      absorb(state, shift) {
        const s = state as UnparseableState;
        if (s.input !== null) {
          input = s.input;
          seen = true;
        }
        lenient.absorb(s.lenient, shift);
      },
    };
  },
};
