import { problemFindings } from '../engine/findings.js';
import type { Rule } from '../engine/types.js';

const ID = 'unparseable-value';

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
    references: [{ cite: 'common practice: a linter must account for every cell it could not read' }],
    doc: {
      catches: 'Cells of a bound numeric column that are not numbers (e.g. `1,23`, `n/a`, `12..5`). Empty cells and the usual null spellings (NaN, null, None, --) are missing values, not findings.',
      why: 'A value that cannot be read is a value no other rule can check. Listing each one, with its line, keeps every row accounted for.',
      fires: 'mass_Msun = "0.8?" on line 17.',
      silent: 'mass_Msun empty, or "NaN".',
      cautions: 'Only columns bound to a quantity are parsed; other columns are never read as numbers.',
    },
  },
  start() {
    return {
      check(batch, out, stats) {
        stats.checked += batch.length;
        problemFindings(batch, 'unparseable', ID, 'warning', out);
      },
    };
  },
};
