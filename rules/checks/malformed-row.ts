import { problemFindings } from '../engine/findings.js';
import type { Rule } from '../engine/types.js';

const ID = 'malformed-row';

/** Ragged or broken records, as the reader met them; the row is still checked with what it has. */
export const malformedRow: Rule = {
  meta: {
    id: ID,
    title: 'Ragged or broken record',
    severity: 'error',
    stage: 'screen',
    needs: [],
    uses: ['id'],
    params: [],
    references: [{ cite: 'RFC 4180 (CSV records have the same number of fields)' }],
    doc: {
      catches: 'Records with fewer or more fields than the header, or an unterminated quote.',
      why: 'A missing or extra field shifts every value after it into the wrong column, so the numbers in that row cannot be trusted, and a later rule may judge a Teff as a mass.',
      fires: 'A record with 11 fields under a 13-column header.',
      silent: 'Every record has as many fields as the header.',
      cautions: 'Fields missing at the end are read as missing values; the rest of the row is still checked.',
    },
  },
  start() {
    return {
      check(batch, out, stats) {
        stats.checked += batch.length;
        problemFindings(batch, 'malformed', ID, 'error', out);
      },
    };
  },
};
