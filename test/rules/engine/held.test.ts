/**
 * The held queue keeps what rules hold until the end of an input in a spill log: first in first
 * out, capped, numbers exact (NaN and infinities too), and across row ranges the items of a later
 * range follow on, shifted, up to the cap. Checked with the in-memory store and the file store.
 */
import { deserialize, serialize } from 'node:v8';
import { describe, expect, it } from 'vitest';
import { HeldQueue } from '../../../rules/engine/held.js';
import { MemorySpill, type SpillStore } from '../../../rules/engine/spill.js';
import type { RowShift } from '../../../rules/engine/types.js';
import { FileSpill } from '../../../cli/spill/file-spill.js';

type Item = { row: number; v: number };

function drained(q: HeldQueue<Item>): { item: Item; tag: number; shift: RowShift }[] {
  const out: { item: Item; tag: number; shift: RowShift }[] = [];
  q.drain((item, tag, shift) => out.push({ item, tag, shift: { ...shift } }));
  return out;
}

const stores: [string, () => SpillStore][] = [
  ['memory', () => new MemorySpill()],
  ['files', () => new FileSpill()],
];

describe.each(stores)('HeldQueue (%s store)', (_name, store) => {
  it('gives back what it held, in order, with exact numbers, and refuses past its cap', () => {
    const q = new HeldQueue<Item>(3, store());
    expect(q.push({ row: 1, v: NaN }, 7)).toBe(true);
    expect(q.push({ row: 2, v: -Infinity })).toBe(true);
    expect(q.push({ row: 3, v: 0.1 + 0.2 })).toBe(true);
    expect(q.full).toBe(true);
    expect(q.push({ row: 4, v: 1 })).toBe(false);
    const out = drained(q);
    expect(out.map((o) => o.item.row)).toEqual([1, 2, 3]);
    expect(out[0].tag).toBe(7);
    expect(out[0].item.v).toBeNaN();
    expect(out[1].item.v).toBe(-Infinity);
    expect(out[2].item.v).toBe(0.1 + 0.2);
    expect(q.length).toBe(0);
  });

  it('absorbs a later range after its own items, shifted, and drops what one pass would not have held', () => {
    const s = store();
    const first = new HeldQueue<Item>(4, s);
    first.push({ row: 1, v: 1 });
    first.push({ row: 5, v: 2 });
    const later = new HeldQueue<Item>(4, s);
    for (const row of [1, 2, 3]) later.push({ row, v: 10 + row });
    const saved = [first.save(), later.save()].map((x) => deserialize(serialize(x)) as ReturnType<HeldQueue<Item>['save']>);
    const whole = new HeldQueue<Item>(4, s);
    expect(whole.absorb(saved[0], { rows: 0, lines: 0 })).toBe(0);
    // Room for two of the later range's three: the third is one pass would have refused.
    expect(whole.absorb(saved[1], { rows: 100, lines: 130 })).toBe(1);
    const out = drained(whole);
    expect(out.map((o) => [o.item.row + o.shift.rows, o.item.v])).toEqual([
      [1, 1],
      [5, 2],
      [101, 11],
      [102, 12],
    ]);
    expect(out[3].shift).toEqual({ rows: 100, lines: 130 });
  });
});

describe('HeldQueue over many chunks', () => {
  it('keeps row order across ranges absorbed between chunks, and reads back one chunk at a time', () => {
    const s = new FileSpill();
    const ranges = [1500, 2600, 900].map((count, k) => {
      const q = new HeldQueue<Item>(5000, s);
      for (let i = 0; i < count; i++) q.push({ row: i + 1, v: k });
      return deserialize(serialize(q.save())) as ReturnType<HeldQueue<Item>['save']>;
    });
    const whole = new HeldQueue<Item>(4500, s);
    let before = 0;
    const refused = ranges.map((r, k) => {
      const n = whole.absorb(r, { rows: before, lines: 0 });
      before += [1500, 2600, 900][k];
      return n;
    });
    // 1500 and 2600 fit whole; 400 of the last 900 fill the cap and 500 are refused.
    expect(refused).toEqual([0, 0, 500]);
    const rows = drained(whole).map((o) => o.item.row + o.shift.rows);
    expect(rows).toEqual(Array.from({ length: 4500 }, (_, i) => i + 1));
  });
});
