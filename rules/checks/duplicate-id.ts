import { rowFindingAt } from '../engine/findings.js';
import type { Rule } from '../engine/types.js';
import { Fingerprint, KeyLog, RepeatLog, idColumnOf, type KeyLogState, type RepeatLogState } from './shared/fingerprints.js';

/** What a run over one row range keeps for the end of the input. */
interface DuplicateIdState {
  keys: KeyLogState;
  log: RepeatLogState;
  /** Null when the range met no batch (no input number) or no id column. */
  input: number | null;
  column: string | null;
}

const ID = 'duplicate-id';

/**
 * Identifiers that occur on more than one row. Ids are compared as text (trimmed, runs of white
 * space as one space), never as numbers: a 19-digit Gaia source_id has more digits than a double
 * holds, and parsed as one, distinct stars collapse onto one id.
 */
export const duplicateId: Rule = {
  meta: {
    id: ID,
    title: 'Identifier on more than one row',
    severity: 'warning',
    stage: 'judge',
    needs: [],
    uses: ['id'],
    params: [
      {
        name: 'listFraction',
        type: 'number',
        default: 0.01,
        min: 0,
        max: 1,
        description: 'Repeated rows are listed one by one while at most this fraction of rows (or at most 10 rows) repeat an id; above it, one note says the table has several rows per star.',
      },
    ],
    references: [
      { cite: 'IEEE 754 binary64: integers above 2^53 = 9.0e15 are not all representable (Gaia DR3 source_id has 19 digits)' },
      { cite: 'CARMENES PROVENANCE (../shared/reference-data): 33 false duplicates among GaiaDR3_id read as doubles, one real one read as text' },
    ],
    doc: {
      catches:
        'Rows whose identifier was already seen in the same input. Where repeats are rare (at most 10 rows, or at most listFraction of the rows) each repeated row is a warning naming the row where the id first appeared; where they are common, as in a table with one row per planet, one note gives the counts. Always one note per input with the counts when any id repeats.',
      why:
        'A catalog of stars with one star on two rows double-counts it, and two stars sharing an id (a mistyped name, a component letter dropped) are mixed up by everything that joins on it. Tables with one row per planet or per measurement repeat their host by design; for those, conflicting-duplicate checks that the repeated host carries the same values.',
      fires:
        'CARMENES with GaiaDR3_id bound as id: LP 377-78 B and GJ 1166 B share 3954959680345736192 (warning on the second row, naming the first).',
      silent:
        'The same catalog read with the 19-digit ids as doubles would report 33 repeats; as text there is one. A PHL or NASA table with 1313 rows repeating their host: one note, no row findings.',
      cautions:
        'Ids are compared exactly (letter case kept): `GJ 1` and `Gl 1` are different ids, so cross-identifications are not found. Each input is judged on its own, so a star repeated in two inputs (or two shards) is not found. The ids are kept in temporary files until the end of the input, so memory does not grow with the rows; repeats are listed at the end of the input.',
    },
  },
  start(ctx) {
    // One record per row with an id, spilled to disk by the command line: memory stays flat.
    const keys = new KeyLog(ctx.spill);
    const fp = new Fingerprint();
    const log = new RepeatLog(1000, ctx.params.listFraction as number);
    let input = 0;
    let seen = false;
    let column = '';
    let columnSeen = false;
    return {
      check(batch, _out, stats) {
        input = batch.input;
        seen = true;
        const idCol = idColumnOf(batch, stats);
        if (!idCol) return;
        column = idCol.column;
        columnSeen = true;
        const values = idCol.values;
        const lines = batch.lines;
        for (let i = 0; i < batch.length; i++) {
          const id = values[i];
          if (id === null) {
            stats.skip('id missing');
            continue;
          }
          stats.checked++;
          log.rows++;
          fp.reset().text(id).done();
          keys.add(fp.hi, fp.lo, batch.firstRow + i, lines ? lines[i] : null, id);
        }
      },
      finish(out) {
        keys.replay((e) => {
          if (e.first) return;
          const id = e.text!;
          const row = e.records[e.at + 2];
          const line = e.records[e.at + 3];
          const { firstRow: first, count: n } = e;
          log.repeat(n, id, row, () =>
            rowFindingAt(input, row, line === line ? line : null, id, {
              rule: ID,
              severity: 'warning',
              columns: [column],
              values: { [column]: id, firstRow: first, rowsSoFar: n },
              message: `${column} \`${id}\` is already on row ${first}${n > 2 ? ` (${n} rows so far)` : ''}: the same star twice, or two stars under one id`,
            }),
          );
        });
        const listed = log.flush(out);
        for (const f of log.notes(ID, input, column, (l) =>
          `${l.repeats} of ${l.rows} rows ${l.repeats === 1 ? 'repeats' : 'repeat'} an id seen on an earlier row (${l.keysRepeated} ${l.keysRepeated === 1 ? 'id is' : 'ids are'} on two or more rows, at most ${l.maxCount} for \`${l.maxKey}\`)${
            listed
              ? l.listedText('; each repeated row is listed')
              : ': the table holds several rows per star (one per planet or component?), so the rows are not listed one by one; conflicting-duplicate reports ids whose values disagree'
          }`,
        ))
          out.push(f);
      },
      summary() {
        return { distinctIds: keys.distinct, rowsRepeatingAnId: log.repeats, idsOnSeveralRows: log.keysRepeated, listed: log.listed() };
      },
      save(): DuplicateIdState {
        return { keys: keys.save(), log: log.save(), input: seen ? input : null, column: columnSeen ? column : null };
      },
      absorb(state, shift) {
        const s = state as DuplicateIdState;
        keys.absorb(s.keys, shift);
        log.absorb(s.log);
        if (s.input !== null) {
          input = s.input;
          seen = true;
        }
        if (s.column !== null) {
          column = s.column;
          columnSeen = true;
        }
      },
    };
  },
};
