/**
 * The spill store that keeps the duplicate rules' per-row records on disk: what goes in comes back
 * per partition in the order written, texts exactly (line breaks, backslashes, empty and none),
 * over many flushed blocks, and the temporary files are gone afterwards. A log handed over as a
 * handle (to another store, thread or process) is absorbed with its rows shifted, and its files
 * are removed or kept as the handle and the store say.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, renameSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import { deserialize, serialize } from 'node:v8';
import { describe, expect, it } from 'vitest';
import { MemorySpill, type FileSpillHandle, type SpillHandle, type SpillLog } from '../../rules/engine/spill.js';
import { FileSpill, discardHandle } from '../../cli/spill/file-spill.js';
import { conflictingDuplicate } from '../../rules/checks/conflicting-duplicate.js';
import { duplicateId } from '../../rules/checks/duplicate-id.js';
import { duplicateRow } from '../../rules/checks/duplicate-row.js';
import { InputRun, selectRules, shiftFinding, type InputRunState } from '../../rules/engine/runner.js';
import type { Batch, Finding, RowShift } from '../../rules/engine/types.js';
import { makeBatch } from '../helpers/batch.js';
import { tempDir } from '../helpers/cli.js';
import { drain } from '../helpers/spill.js';

const TEXTS = [null, '', 'GJ 1', 'two\nlines', 'back\\slash', '=x', 'cr\rhere', 'Sérsic α Cen', '\\n literally'];

describe('spill stores', () => {
  it('give back every record and text per partition in the order written, on disk as in memory', () => {
    const dir = tempDir();
    process.env.STARSIEVE_TMPDIR = dir;
    try {
      const width = 3;
      const partitions = 5;
      const logs = [new FileSpill().open(width, partitions), new MemorySpill().open(width, partitions)];
      const expected: { records: number[]; texts: (string | null)[] }[] = Array.from({ length: partitions }, () => ({ records: [], texts: [] }));
      // 40 000 records of 24 bytes: several 64 kB blocks per partition.
      for (let i = 0; i < 40_000; i++) {
        const p = (i * 7) % partitions;
        const rec = [i, -i / 3, i % 11 === 0 ? NaN : 1e300 * (i % 2 ? 1 : -1)];
        const text = TEXTS[i % TEXTS.length];
        for (const log of logs) log.append(p, rec, text);
        expected[p].records.push(...rec);
        expected[p].texts.push(text);
      }
      expect(readdirSync(dir).length).toBe(1);
      for (const log of logs) {
        for (let p = 0; p < partitions; p++) {
          const got = log.take(p);
          expect([...got.records]).toEqual(expected[p].records);
          expect(got.texts).toEqual(expected[p].texts);
        }
        log.close();
      }
      expect(readdirSync(dir)).toEqual([]);
    } finally {
      delete process.env.STARSIEVE_TMPDIR;
    }
  });

  it('keeps a partition that never reached a block in memory and writes nothing for it', () => {
    const dir = tempDir();
    process.env.STARSIEVE_TMPDIR = dir;
    try {
      const log = new FileSpill().open(2, 3);
      log.append(1, [1, 2], 'a');
      const spillDir = join(dir, readdirSync(dir)[0]);
      expect(readdirSync(spillDir)).toEqual([]);
      expect(log.take(0).records.length).toBe(0);
      expect([...log.take(1).records]).toEqual([1, 2]);
      log.close();
      expect(existsSync(spillDir)).toBe(false);
    } finally {
      delete process.env.STARSIEVE_TMPDIR;
    }
  });
});


/**
 * Rows `from`..`to` of a whole input as records [row, line, payload] over 4 partitions, written as
 * by a range that starts after `rows` rows and `lines` lines: numbered from 1 within the range.
 */
function fill(log: SpillLog, from: number, to: number, rows = 0, lines = 0): void {
  for (let g = from; g <= to; g++) log.append(g % 4, [g - rows, g === 7 ? NaN : g + 10 - lines, -g / 7], TEXTS[g % TEXTS.length]);
}

/** What one log over rows 1..n gives. */
function whole(n: number): { records: number[]; texts: (string | null)[] }[] {
  const log = new MemorySpill().open(3, 4);
  fill(log, 1, n);
  return drain(log);
}

const roundTrip = (h: SpillHandle): SpillHandle => deserialize(serialize(h)) as SpillHandle;

function withTmp<T>(body: (dir: string) => T): T {
  const dir = tempDir();
  process.env.STARSIEVE_TMPDIR = dir;
  try {
    return body(dir);
  } finally {
    delete process.env.STARSIEVE_TMPDIR;
  }
}

describe('spill handles: a log handed over and absorbed by another', () => {
  it('two file stores: the second range is absorbed with its rows and lines shifted, as if one log had it all; its files are then removed', () => {
    withTmp((tmp) => {
      const a = new FileSpill().open(3, 4);
      const b = new FileSpill().open(3, 4);
      // Several 64 kB blocks per partition in both; range 2 starts after row 12 000 and line 12 004.
      fill(a, 1, 12_000);
      fill(b, 12_001, 30_000, 12_000, 12_004);
      const handle = roundTrip(b.detach()) as FileSpillHandle;
      expect(handle.spillHandle).toBe('files');
      expect(handle.dir.startsWith(tmp)).toBe(true);
      expect(readdirSync(handle.dir).length).toBe(8);
      const final = new FileSpill().open(3, 4);
      final.absorb(roundTrip(a.detach()));
      final.absorb(handle, [12_000, 12_004, 0]);
      expect(drain(final)).toEqual(whole(30_000));
      expect(existsSync(handle.dir)).toBe(false);
      expect(readdirSync(tmp)).toEqual([]);
    });
  });

  it('a kept handle, or a store that keeps what it absorbs, reads the files and leaves them in place', () => {
    withTmp((tmp) => {
      for (const how of ['handle', 'store'] as const) {
        const src = new FileSpill().open(3, 4);
        fill(src, 1, 20_000);
        const handle = src.detach() as FileSpillHandle;
        const before = readdirSync(handle.dir).sort();
        expect(before.length).toBe(8);
        const store = how === 'store' ? new FileSpill({ keepAbsorbed: true }) : new FileSpill();
        const given = (): SpillHandle => (how === 'handle' ? { ...handle, keep: true } : handle);
        expect(drain(store.adopt(given()))).toEqual(whole(20_000));
        // Kept files give the same records again.
        expect(drain(store.adopt(given()))).toEqual(whole(20_000));
        expect(readdirSync(handle.dir).sort()).toEqual(before);
        discardHandle(handle);
        expect(existsSync(handle.dir)).toBe(false);
      }
      expect(readdirSync(tmp)).toEqual([]);
    });
  });

  it('shifts compose through a log that absorbed others and was handed on; memory and file handles mix; appends after an absorb come after it', () => {
    withTmp((tmp) => {
      // Ranges of rows 1-100, 101-350 and 351-4750, lines shifted apart from rows.
      const r1 = new FileSpill().open(3, 4);
      fill(r1, 1, 100);
      const r2 = new MemorySpill().open(3, 4);
      fill(r2, 101, 350, 100, 103);
      const r3 = new FileSpill().open(3, 4);
      fill(r3, 351, 4750, 350, 360);
      // A middle thread takes ranges 2 and 3 (range 3 shifted within its part), then hands them on.
      const mid = new FileSpill().open(3, 4);
      mid.absorb(roundTrip(r2.detach()));
      mid.absorb(roundTrip(r3.detach()), [250, 257, 0]);
      const midHandle = roundTrip(mid.detach()) as FileSpillHandle;
      // Its own run (range 2, written out), then range 3's folder as a nested handle.
      expect(midHandle.segments.map((s) => (typeof s === 'string' ? s : s.add))).toEqual(['s0', [250, 257, 0]]);
      const final = new FileSpill().open(3, 4);
      final.absorb(roundTrip(r1.detach()));
      final.absorb(midHandle, [100, 103, 0]);
      fill(final, 4751, 4760);
      expect(drain(final)).toEqual(whole(4760));
      expect(readdirSync(tmp)).toEqual([]);
    });
  });

  it('every folder is the dir of one handle object: moved elsewhere and renamed in the handle, the log reads the same, and all of it goes', () => {
    withTmp((tmp) => {
      const r1 = new FileSpill().open(3, 4);
      fill(r1, 1, 3000);
      const r2 = new FileSpill().open(3, 4);
      fill(r2, 3001, 20_000, 3000, 3000);
      // A log that only absorbs: its own folder holds nothing, yet goes with its handle.
      const mid = new FileSpill().open(3, 4);
      mid.absorb(r1.detach());
      mid.absorb(r2.detach(), [3000, 3000, 0]);
      const handle = mid.detach() as FileSpillHandle;
      const folders = new Set<string>();
      const moved = join(tempDir(), 'moved');
      mkdirSync(moved);
      // What a caller does to carry shard state to another machine: move each folder, rewrite each `dir`.
      const rewrite = (h: FileSpillHandle): FileSpillHandle => {
        folders.add(h.dir);
        return { ...h, dir: join(moved, basename(h.dir)), segments: h.segments.map((x) => (typeof x === 'string' ? x : rewrite(x))) };
      };
      const there = roundTrip(rewrite(handle)) as FileSpillHandle;
      expect(folders.size).toBe(3);
      for (const d of folders) renameSync(d, join(moved, basename(d)));
      expect(readdirSync(tmp)).toEqual([]);
      expect(drain(new FileSpill().adopt(there))).toEqual(whole(20_000));
      expect(readdirSync(moved)).toEqual([]);
    });
  });

  it('a log made in another process is absorbed here, and its folder goes once read', () => {
    withTmp((tmp) => {
      const script = join(tempDir(), 'make-log.ts');
      const spill = join(import.meta.dirname, '../../cli/spill/file-spill.ts');
      writeFileSync(
        script,
        `import { FileSpill } from ${JSON.stringify(spill)};
const log = new FileSpill().open(3, 4);
for (let row = 1; row <= 5000; row++) log.append(row % 4, [row, row + 10, -row], 'p' + row);
process.stdout.write(JSON.stringify(log.detach()));
`,
      );
      const out = execFileSync(process.execPath, ['--import', 'tsx', script], { env: { ...process.env, STARSIEVE_TMPDIR: tmp }, encoding: 'utf8' });
      const handle = JSON.parse(out) as FileSpillHandle;
      // That process has exited, and the folder it handed over is still there.
      expect(existsSync(handle.dir)).toBe(true);
      const got = drain(new FileSpill().adopt(handle, [1000, 0, 0]));
      expect(got[1].records.slice(0, 3)).toEqual([1001, 11, -1]);
      expect(got[1].texts[0]).toBe('p1');
      expect(got.reduce((n, p) => n + p.texts.length, 0)).toBe(5000);
      expect(readdirSync(tmp)).toEqual([]);
    });
  });

  it('a store with a root keeps its logs there; a detached log takes no more appends and close leaves its files', () => {
    const root = join(tempDir(), 'shard-state');
    const log = new FileSpill({ root }).open(3, 4);
    fill(log, 1, 10);
    const handle = log.detach() as FileSpillHandle;
    expect(handle.dir.startsWith(root)).toBe(true);
    expect(() => log.append(0, [1, 2, 3])).toThrow(/detached/);
    expect(() => log.take(0)).toThrow(/detached/);
    log.close();
    // Detaching wrote out the partitions that were still in memory.
    expect(readdirSync(handle.dir).length).toBe(8);
    expect(drain(new FileSpill().adopt(handle))).toEqual(whole(10));
    expect(readdirSync(root)).toEqual([]);
  });

  it('refuses a handle of another shape, and MemorySpill refuses file handles', () => {
    withTmp((tmp) => {
      const src = new FileSpill().open(3, 4);
      fill(src, 1, 5);
      const handle = src.detach();
      const narrow = new FileSpill().open(2, 4);
      expect(() => narrow.absorb(handle)).toThrow(/cannot absorb/);
      narrow.close();
      expect(() => new MemorySpill().open(3, 4).absorb(handle)).toThrow(/FileSpill/);
      expect(existsSync((handle as FileSpillHandle).dir)).toBe(true);
      discardHandle(handle);
      expect(readdirSync(tmp)).toEqual([]);
    });
  });
});

describe('the duplicate rules in row ranges with file spills', () => {
  // 20 000 invented rows: every 200th repeats an earlier id with another mass, every 333rd repeats an earlier row exactly.
  const N = 20_000;
  const source = (g: number) => (g % 200 === 0 ? g / 200 : g % 333 === 0 ? g / 333 : g);
  const idOf = (g: number) => `S${source(g)}`;
  const massOf = (g: number) => (g % 200 === 0 ? 3.1 : 1 + source(g) / 1e5);
  const teffOf = (g: number) => 5000 + (source(g) % 1000);
  /** Rows from..to as batches of 700, numbered from 1 within a range that starts after `shift`. */
  function batches(from: number, to: number, shift: RowShift): Batch[] {
    const out: Batch[] = [];
    for (let a = from; a <= to; a += 700) {
      const rows = Array.from({ length: Math.min(700, to - a + 1) }, (_, k) => a + k);
      const b = makeBatch({ mass: { values: rows.map(massOf), err: rows.map(() => 0.01) }, teff: { values: rows.map(teffOf) } }, { id: rows.map(idOf) }, a - shift.rows);
      b.lines = Int32Array.from(rows, (g) => g + 1 - shift.lines);
      out.push(b);
    }
    return out;
  }
  const rules = selectRules([duplicateId, duplicateRow, conflictingDuplicate], {});
  const bound = new Map([
    ['mass', { column: 'mass', unit: '' }],
    ['teff', { column: 'teff', unit: '' }],
    ['id', { column: 'id', unit: '' }],
  ] as const);

  it('give the findings and accounting of one pass, and leave no folder behind', () => {
    withTmp((tmp) => {
      const whole: Finding[] = [];
      const one = new InputRun(rules, {}, bound, { push: (f) => whole.push(f) }, undefined, undefined, new MemorySpill());
      for (const b of batches(1, N, { rows: 0, lines: 0 })) one.processBatch(b);
      const wholeReports = one.finish();
      for (const id of ['duplicate-id', 'duplicate-row', 'conflicting-duplicate']) expect(whole.filter((f) => f.rule === id && f.scope === 'row').length).toBeGreaterThan(40);

      const starts = [1, 6001, 6002, 13_500, N + 1];
      const split: Finding[] = [];
      const states: { state: InputRunState; shift: RowShift }[] = [];
      for (let r = 0; r + 1 < starts.length; r++) {
        // Line numbers of a range file with its own header line: the first row is on line 2.
        const shift = { rows: starts[r] - 1, lines: starts[r] - 1 };
        const run = new InputRun(rules, {}, bound, { push: (f) => split.push(shiftFinding(f, shift)) }, undefined, undefined, new FileSpill());
        expect(run.splittable()).toBe(true);
        for (const b of batches(starts[r], starts[r + 1] - 1, shift)) run.processBatch(b);
        states.push({ state: deserialize(serialize(run.saveState())) as InputRunState, shift });
      }
      // The range logs' folders wait for the run that absorbs them.
      expect(readdirSync(tmp).length).toBe(3 * (starts.length - 1));
      const final = new InputRun(rules, {}, bound, { push: (f) => split.push(f) }, undefined, undefined, new FileSpill());
      for (const { state, shift } of states) final.absorbState(state, shift);
      const reports = final.finish();
      expect(split).toEqual(whole);
      expect(reports).toEqual(wholeReports);
      expect(readdirSync(tmp)).toEqual([]);
    });
  });
});
