/**
 * The spill store that keeps the duplicate rules' per-row records on disk: what goes in comes back
 * per partition in the order written, texts exactly (line breaks, backslashes, empty and none),
 * over many flushed blocks, and the temporary files are gone afterwards.
 */
import { existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { MemorySpill } from '../../rules/engine/spill.js';
import { FileSpill } from '../../cli/spill/file-spill.js';
import { tempDir } from '../helpers/cli.js';

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
