import { rowFindingAt } from '../engine/findings.js';
import { NUMERIC_QUANTITIES } from '../engine/quantities.js';
import type { Rule } from '../engine/types.js';
import { Fingerprint, KeyLog, RepeatLog, type KeyLogState, type RepeatLogState } from './shared/fingerprints.js';

/** What a run over one row range keeps for the end of the input. */
interface DuplicateRowState {
  keys: KeyLogState;
  log: RepeatLogState;
  /** What the range's last batch said; null when the range met no batch. */
  last: { input: number; idColumn: string | null; columns: string[] } | null;
}

const ID = 'duplicate-row';

/**
 * Rows identical to an earlier row in every bound value: id, stage, each numeric value and its
 * uncertainties, as written. Only a 64-bit fingerprint per row is kept, never the row, and that in
 * temporary files until the end of the input (see KeyLog).
 */
export const duplicateRow: Rule = {
  meta: {
    id: ID,
    title: 'Row repeated exactly',
    severity: 'warning',
    stage: 'judge',
    needs: [],
    uses: [...NUMERIC_QUANTITIES, 'id', 'stage'],
    params: [
      {
        name: 'minValues',
        type: 'number',
        default: 2,
        min: 1,
        description: 'Rows with fewer numeric values than this are not compared (companions with only an id are not duplicates).',
      },
      {
        name: 'listFraction',
        type: 'number',
        default: 0.01,
        min: 0,
        max: 1,
        description: 'Repeated rows are listed one by one while at most this fraction of rows (or at most 10 rows) repeat; above it, one note gives the counts.',
      },
    ],
    references: [{ cite: 'common practice: a repeated record double-counts a star in every statistic drawn from the table' }],
    doc: {
      catches:
        'Rows that repeat an earlier row of the same input exactly, in every bound column (id, stage or type, and every numeric value and uncertainty as written). Rare repeats are listed one by one (warning, naming the first row); common ones, as in a table with one row per planet whose host columns repeat, are summed up in one note.',
      why:
        'An exact repeat is a copy-paste or a merge that ran twice: it double-counts the star in every histogram, fit and selection. Comparing fingerprints of the bound values keeps one 64-bit key per row, in temporary files until the end of the input, so memory does not grow with the rows.',
      fires: 'Rows 11 and 12 both read `TWC-000011, MS, 1.02, 0.98, 1.01, 5790, 4.45`: row 12 repeats row 11 (warning).',
      silent:
        'Two rows for the same host with different values (conflicting-duplicate judges those); a PHL table where 1032 host rows repeat because each planet has its own row (one note); rows with fewer than two numeric values.',
      cautions:
        'Only bound columns are compared: two rows differing only in an unbound column (a planet name, a reference) are repeats here. Values are compared as written, so 1.0 and 1.00 are equal and 1.0 and 1.01 are not. Each input is judged on its own; repeats are listed at the end of the input.',
    },
  },
  start(ctx) {
    const minValues = ctx.params.minValues as number;
    const keys = new KeyLog(ctx.spill);
    const log = new RepeatLog(1000, ctx.params.listFraction as number);
    const fp = new Fingerprint();
    let input = 0;
    let seen = false;
    let idColumn: string | null = null;
    let columns: string[] = [];
    return {
      check(batch, _out, stats) {
        input = batch.input;
        seen = true;
        const cols = NUMERIC_QUANTITIES.map((q) => batch.quantities[q]).filter((c) => c !== undefined);
        const id = batch.text.id?.values ?? null;
        const stage = batch.text.stage?.values ?? null;
        const lines = batch.lines;
        idColumn = batch.text.id?.column ?? null;
        columns = [...(idColumn ? [idColumn] : []), ...(batch.text.stage ? [batch.text.stage.column] : []), ...cols.map((c) => c.column)];
        for (let i = 0; i < batch.length; i++) {
          let finite = 0;
          for (const c of cols) if (Number.isFinite(c.raw[i])) finite++;
          if (finite < minValues) {
            stats.skip(`fewer than ${minValues} numeric values`);
            continue;
          }
          stats.checked++;
          log.rows++;
          fp.reset();
          if (id) fp.text(id[i]);
          if (stage) fp.text(stage[i]);
          for (const c of cols) {
            fp.number(c.raw[i]);
            // Uncertainties as written where the binder kept them, else their magnitudes.
            const w = c.errRaw;
            const lo = w ? w.lo : c.errLo;
            const hi = w ? (w.symmetric ? null : w.hi) : c.errHi;
            if (lo) fp.number(lo[i]);
            if (hi) fp.number(hi[i]);
          }
          fp.done();
          keys.add(fp.hi, fp.lo, batch.firstRow + i, lines ? lines[i] : null, id ? id[i] : null);
        }
      },
      finish(out) {
        keys.replay((e) => {
          if (e.first) return;
          const row = e.records[e.at + 2];
          const line = e.records[e.at + 3];
          const { firstRow: first, count: n } = e;
          log.repeat(n, e.text ?? `row ${first}`, row, () =>
            rowFindingAt(input, row, line === line ? line : null, e.text, {
              rule: ID,
              severity: 'warning',
              columns,
              values: { firstRow: first, rowsSoFar: n, columnsCompared: columns.length },
              message: `row ${row} repeats row ${first} exactly in all ${columns.length} bound columns${n > 2 ? ` (${n} copies so far)` : ''}: a copy or a merge that ran twice?`,
            }),
          );
        });
        const listed = log.flush(out);
        for (const f of log.notes(ID, input, idColumn ?? '', (l) =>
          `${l.repeats} of ${l.rows} rows ${l.repeats === 1 ? 'repeats' : 'repeat'} an earlier row exactly in every bound column (${l.keysRepeated} distinct ${l.keysRepeated === 1 ? 'row occurs' : 'rows occur'} more than once, at most ${l.maxCount} times)${
            listed
              ? l.listedText('; each repeat is listed')
              : idColumn
                ? `: the rows share their ${idColumn} as well, so the table most likely holds several rows per star whose stellar columns repeat (one per planet?); they are not listed one by one`
                : ': they are not listed one by one'
          }`,
        ))
          out.push(f);
      },
      summary() {
        return { distinctRows: keys.distinct, repeatedRows: log.repeats, listed: log.listed() };
      },
      save(): DuplicateRowState {
        return { keys: keys.save(), log: log.save(), last: seen ? { input, idColumn, columns } : null };
      },
      absorb(state, shift) {
        const s = state as DuplicateRowState;
        keys.absorb(s.keys, shift);
        log.absorb(s.log);
        if (s.last) {
          ({ input, idColumn, columns } = s.last);
          seen = true;
        }
      },
    };
  },
};
