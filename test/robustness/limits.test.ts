/**
 * The limits in README.md, "Limits": the gzip inflate limit and its override, the record size cap,
 * and report paths that cannot be written. (The corpus test runs the bomb and the 10 MB field
 * themselves through the command line.)
 */
import { mkdirSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { gzipSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { INFLATE_FLOOR_BYTES, INFLATE_LIMIT_ENV, MAX_INFLATE_RATIO, inflateLimit, parseByteSize } from '../../cli/readers/gzip.js';
import { openCatalog } from '../../cli/readers/open.js';
import { AtomicFile, OutputError } from '../../cli/reports/atomic-file.js';
import { InputError } from '../../cli/readers/types.js';
import { cli, tempDir } from '../helpers/cli.js';
import { drain } from './pipeline.js';
import { STACK_FRAME, runCli } from './run-cli.js';

describe('the gzip inflate limit', () => {
  it('is the larger of 64 MiB and 200 times the compressed size, unless set', () => {
    expect(INFLATE_FLOOR_BYTES).toBe(64 * 2 ** 20);
    expect(inflateLimit(1000, undefined, undefined)).toBe(INFLATE_FLOOR_BYTES);
    expect(inflateLimit(10 * 2 ** 20, undefined, undefined)).toBe(MAX_INFLATE_RATIO * 10 * 2 ** 20);
    expect(inflateLimit(1000, 5, '8G')).toBe(5);
    expect(inflateLimit(1000, undefined, '8G')).toBe(8 * 2 ** 30);
    expect(inflateLimit(1000, undefined, '')).toBe(INFLATE_FLOOR_BYTES);
  });

  it('reads sizes as a user writes them, and refuses anything else in one line', () => {
    expect(parseByteSize('1048576')).toBe(1048576);
    expect(parseByteSize('500M')).toBe(500 * 2 ** 20);
    expect(parseByteSize('1.5g')).toBe(1.5 * 2 ** 30);
    expect(parseByteSize('2 GiB')).toBe(2 * 2 ** 30);
    expect(parseByteSize('off')).toBe(Number.MAX_SAFE_INTEGER);
    expect(() => parseByteSize('lots')).toThrow(InputError);
    expect(() => parseByteSize('lots')).toThrow(/^STARSIEVE_MAX_INFLATED_BYTES="lots" is not a size; give bytes such as 4G, 500M or 1048576, or off$/);
  });

  it('the environment variable lowers or lifts it for a run', async () => {
    const d = tempDir();
    const p = join(d, 'cat.csv.gz');
    writeFileSync(p, gzipSync('id,mass_Msun\n' + 'a,1\n'.repeat(5000)));
    const low = await runCli(['check', p, '--quiet', '--fail-on', 'never'], 20_000, { [INFLATE_LIMIT_ENV]: '1k' });
    expect(low.code).toBe(2);
    expect(low.stderr.trim().split('\n')).toHaveLength(1);
    expect(low.stderr).toMatch(/decompresses to more than 1024 bytes .*STARSIEVE_MAX_INFLATED_BYTES=8G/);
    // In process (sparing a start-up each): off lifts the limit, a bad value is one InputError.
    const saved = process.env[INFLATE_LIMIT_ENV];
    try {
      process.env[INFLATE_LIMIT_ENV] = 'off';
      expect((await drain(await openCatalog(p))).stats.rows).toBe(5000);
      process.env[INFLATE_LIMIT_ENV] = 'lots';
      await expect(openCatalog(p)).rejects.toThrow(/^STARSIEVE_MAX_INFLATED_BYTES="lots" is not a size/);
    } finally {
      if (saved === undefined) delete process.env[INFLATE_LIMIT_ENV];
      else process.env[INFLATE_LIMIT_ENV] = saved;
    }
  });
});

describe('the record size cap', () => {
  it('skips one enormous line with its line number and reads on, holding no more than the cap', async () => {
    const d = tempDir();
    const p = join(d, 'long.csv');
    // 3 MiB of digits against a 1 MiB cap (the option the default 8 MiB comes from).
    writeFileSync(p, `id,mass_Msun\na,1\nb,${'7'.repeat(3 << 20)}\nc,1\n`);
    const { openCsv } = await import('../../cli/readers/csv.js');
    const r = await drain(await openCsv(p, { maxRecordChars: 1 << 20, readChunkBytes: 1 << 16 }));
    expect(r.stats).toEqual({ records: 3, rows: 2, unparseable: 1 });
    expect(r.malformed).toEqual([{ row: null, line: 3, message: expect.stringMatching(/^line 3: the record starting here runs past 1048576 characters without ending/) }]);
    expect(r.rows.map((x) => x[0])).toEqual(['a', 'c']);
    expect(r.lines).toEqual([2, 4]);
  });

  it('is the same through openCatalog with the default cap (8 MiB)', async () => {
    const d = tempDir();
    const p = join(d, 'long.csv');
    writeFileSync(p, `id,mass_Msun\na,1\nb,${'7'.repeat(9 << 20)}\nc,1\n`);
    const r = await drain(await openCatalog(p));
    expect(r.stats).toEqual({ records: 3, rows: 2, unparseable: 1 });
    expect(r.malformed[0].message).toMatch(/runs past 8388608 characters/);
  });
});

describe('report paths that cannot be written', () => {
  it('a missing folder: an error naming the report, not its temporary file', () => {
    const d = tempDir();
    const target = join(d, 'no', 'such', 'r.json');
    expect(() => new AtomicFile(target)).toThrow(new OutputError(`cannot write ${target}: no such file or directory`, 'ENOENT'));
  });

  it('a directory in the way: one line, exit 2, the directory untouched and no temporary file left', () => {
    const d = tempDir();
    mkdirSync(join(d, 'taken.json'));
    const dir = cli(['check', 'sample-catalogs/thistlewood-dr1.csv', '--report', join(d, 'taken.json'), '--quiet', '--fail-on', 'never']);
    expect(dir.code).toBe(2);
    expect(dir.stderr.trim()).toBe(`starsieve: cannot write ${join(d, 'taken.json')}: it is a directory`);
    expect(dir.stderr).not.toMatch(STACK_FRAME);
    expect(readdirSync(d).sort()).toEqual(['taken.json']);
  });
});
