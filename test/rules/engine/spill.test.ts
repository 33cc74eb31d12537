/**
 * Spill logs handed over between the runs of one input checked in row ranges: a log detaches as a
 * plain-data handle that survives the v8 serializer, and another log absorbs it with the row
 * numbers of its records shifted, giving what one log appended to in row order would. Then the
 * duplicate rules' key log and the per-column tallies built on the same idea.
 */
import { deserialize, serialize } from 'node:v8';
import { describe, expect, it } from 'vitest';
import { MemorySpill, composeShift, fileRuns, ownedFolders, spillHandlesIn, type FileSpillHandle, type SpillLog } from '../../../rules/engine/spill.js';
import { FirstByRow, KeyLog, RepeatLog, type KeyEvent } from '../../../rules/checks/shared/fingerprints.js';
import { ColumnTally } from '../../../rules/checks/shared/column-tally.js';
import type { Finding } from '../../../rules/engine/types.js';
import { drain } from '../../helpers/spill.js';

const clone = <T>(x: T): T => deserialize(serialize(x)) as T;


/** Rows from..to of a whole input as [row, line, payload], written by a range after `rows` rows and `lines` lines. */
function fill(log: SpillLog, from: number, to: number, rows = 0, lines = 0): void {
  for (let g = from; g <= to; g++) log.append(g % 3, [g - rows, g % 5 === 0 ? NaN : g + 2 - lines, g % 7 === 0 ? -0 : g * 0.1], g % 4 === 0 ? null : `t${g}`);
}

describe('memory spill handles', () => {
  it('detach to plain data, absorb in order with rows and lines shifted: the records of one log', () => {
    const whole = new MemorySpill().open(3, 3);
    fill(whole, 1, 300);
    const a = new MemorySpill().open(3, 3);
    const b = new MemorySpill().open(3, 3);
    const c = new MemorySpill().open(3, 3);
    fill(a, 1, 120);
    fill(b, 121, 121, 120, 125);
    fill(c, 122, 300, 121, 130);
    const final = new MemorySpill().open(3, 3);
    const ha = clone(a.detach());
    expect(ha.spillHandle).toBe('memory');
    final.absorb(ha);
    final.absorb(clone(b.detach()), [120, 125]);
    final.absorb(clone(c.detach()), [121, 130, 0]);
    const got = drain(final);
    expect(got).toEqual(drain(whole));
    // Fields without a shift come back bit for bit (-0 stays -0).
    expect(got.some((p) => p.records.some((v) => Object.is(v, -0)))).toBe(true);
  });

  it('adopt is open then absorb; a detached log takes no more appends, is detached once, and shapes must agree', () => {
    const a = new MemorySpill().open(2, 2);
    a.append(1, [5, 6], 'x');
    const h = a.detach();
    expect(() => a.append(0, [1, 2])).toThrow(/detached/);
    expect(() => a.detach()).toThrow(/once/);
    expect(drain(new MemorySpill().adopt(h, [10]))).toEqual([
      { records: [], texts: [] },
      { records: [15, 6], texts: ['x'] },
    ]);
    expect(() => new MemorySpill().open(3, 2).absorb(h)).toThrow(/cannot absorb/);
    const files: FileSpillHandle = { spillHandle: 'files', width: 2, partitions: 2, dir: '/nowhere', segments: [], add: null };
    expect(() => new MemorySpill().open(2, 2).absorb(files)).toThrow(/FileSpill/);
  });

  it('handles are found inside a saved state; nested file handles flatten to runs with shifts composed; kept folders are not owned', () => {
    const m = new MemorySpill().open(1, 1).detach();
    const inner = (dir: string, add: number[] | null, keep?: boolean): FileSpillHandle => ({ spillHandle: 'files', width: 4, partitions: 2, dir, segments: ['s0', 's1'], add, ...(keep ? { keep } : {}) });
    const f: FileSpillHandle = { spillHandle: 'files', width: 4, partitions: 2, dir: '/a', segments: ['s0', inner('/b', [0, 0, 5, 6]), 's1', inner('/c', null, true)], add: [0, 0, 100, 200] };
    const state = { rules: [{ state: { keys: { log: m } } }, { state: new Map([['x', { log: f }]]) }, { state: new Float64Array(3) }] };
    expect(spillHandlesIn(state)).toEqual([m, f]);
    expect(fileRuns(f, [0, 0, 1000, 0]).map((r) => [r.dir, r.name, r.add, r.keep])).toEqual([
      ['/a', 's0', [0, 0, 1100, 200], false],
      ['/b', 's0', [0, 0, 1105, 206], false],
      ['/b', 's1', [0, 0, 1105, 206], false],
      ['/a', 's1', [0, 0, 1100, 200], false],
      ['/c', 's0', [0, 0, 1100, 200], true],
      ['/c', 's1', [0, 0, 1100, 200], true],
    ]);
    expect(ownedFolders(f)).toEqual(['/a', '/b']);
    expect(ownedFolders({ ...f, keep: true })).toEqual([]);
    expect(fileRuns({ ...f, keep: true }).every((r) => r.keep)).toBe(true);
    expect(composeShift(4, null, [0, 0, 0, 0])).toBeNull();
  });
});

/** The events of a key log's replay, as plain rows. */
function events(log: KeyLog): unknown[] {
  const out: unknown[] = [];
  log.replay((e: KeyEvent) => out.push([e.entry, e.first, e.firstRow, e.count, ...e.records.subarray(e.at, e.at + 4 + log.extra), e.text]));
  return out;
}

describe('key logs and tallies in row ranges', () => {
  // 2000 rows whose keys repeat every 37 rows and every 501 rows, with one extra number each.
  const keyOf = (g: number) => (g % 37 === 0 ? 37 : g % 501 === 0 ? 501 : g);
  function keys(log: KeyLog, from: number, to: number, rows = 0, lines = 0): void {
    for (let g = from; g <= to; g++) log.add(Math.imul(keyOf(g), 2654435761) >>> 0, keyOf(g) * 97, g - rows, g % 9 === 0 ? null : g + 3 - lines, `id${keyOf(g)}`, new Float64Array([g / 3]));
  }

  it('a key log saved per range and absorbed in order replays as one log: same entries, first rows and counts', () => {
    const whole = new KeyLog(new MemorySpill(), 1);
    keys(whole, 1, 2000);
    const cuts = [1, 2, 700, 701, 1999, 2001];
    const final = new KeyLog(new MemorySpill(), 1);
    for (let r = 0; r + 1 < cuts.length; r++) {
      const part = new KeyLog(new MemorySpill(), 1);
      const shift = { rows: cuts[r] - 1, lines: cuts[r] === 1 ? 0 : cuts[r] + 1 };
      keys(part, cuts[r], cuts[r + 1] - 1, shift.rows, shift.lines);
      final.absorb(clone(part.save()), shift);
    }
    const want = events(whole);
    expect(want.length).toBe(2000);
    expect(want.filter((e) => !(e as unknown[])[1]).length).toBe(2000 - whole.distinct);
    expect(whole.distinct).toBeLessThan(1950);
    expect(events(final)).toEqual(want);
    expect(final.distinct).toBe(whole.distinct);
  });

  it('a repeat log keeps the rows judged, and refuses to be saved once repeats are counted', () => {
    const a = new RepeatLog(10, 0.01);
    a.rows = 5;
    const b = new RepeatLog(10, 0.01);
    b.rows = 7;
    const final = new RepeatLog(10, 0.01);
    final.absorb(clone(a.save()));
    final.absorb(clone(b.save()));
    expect(final.rows).toBe(12);
    const stub = { row: 1 } as Finding;
    final.repeat(2, 'k', 3, () => stub);
    expect(() => final.save()).toThrow(/replayed/);
  });

  it('first-by-row lists across ranges keep the first rows of the whole', () => {
    const f = (row: number): Finding => ({ rule: 'r', severity: 'warning', input: 0, scope: 'row', row, line: row + 1, id: null, columns: [], values: {}, expected: null, message: 'm', suggestion: null, cause: null, related: [] });
    const a = new FirstByRow(3);
    for (const r of [9, 2, 7, 4]) a.offer(r, () => f(r));
    const b = new FirstByRow(3);
    for (const r of [1, 3]) b.offer(r, () => f(r));
    const final = new FirstByRow(3);
    final.absorb(clone(a.save()), { rows: 0, lines: 0 });
    final.absorb(clone(b.save()), { rows: 10, lines: 20 });
    expect(final.list().map((x) => [x.row, x.line])).toEqual([
      [2, 3],
      [4, 5],
      [7, 8],
    ]);
  });

  it('column tallies: counts add up, first rows are shifted and kept, and the order is that of one pass over one batch', () => {
    // A rule counts column by column (rank = loop position), then the reader's problems in row order (no rank).
    function count(t: ColumnTally, from: number, to: number, rows = 0, lines = 0): void {
      for (const [rank, column] of ['mass', 'teff'].entries()) {
        for (let g = from; g <= to; g++) if (g % (column === 'mass' ? 11 : 3) === 0) t.add(column, g % 2 ? '-999' : '-99', g - rows, g - lines, null, rank);
      }
      for (let g = from; g <= to; g++) if (g % 13 === 0 || g === 5) t.add(g % 26 ? 'mass' : 'radius', '...', g - rows, g - lines, `cell ${g}`);
    }
    const one = new ColumnTally();
    count(one, 1, 100);
    const want = clone(one.save());
    expect(want.map((c) => c.column)).toEqual(['mass', 'teff', 'radius']);
    // mass: codes from row 11 and a `...` on row 5, counted after them; teff's first code is on row 3, but its loop comes second.
    expect(want[0].labels.map((l) => l[0])).toEqual(['-999', '-99', '...']);
    expect([want[0].firstRow, want[0].example]).toEqual([5, 'cell 5']);
    for (const cuts of [[1, 101], [1, 4, 12, 14, 101], [1, 27, 28, 101]]) {
      const final = new ColumnTally();
      for (let r = 0; r + 1 < cuts.length; r++) {
        const part = new ColumnTally();
        count(part, cuts[r], cuts[r + 1] - 1, cuts[r] - 1, cuts[r] - 1);
        final.absorb(clone(part.save()), { rows: cuts[r] - 1, lines: cuts[r] - 1 });
      }
      expect(final.save()).toEqual(want);
      expect(final.total()).toBe(one.total());
    }
  });
});
