/**
 * A sharded run merged must be the one-machine run: the same findings in the same order, the same
 * inputs, bindings, rule accounting and summary (only the time and what the run cost differ).
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { REPO, checkInShards, cli, comparableReport, tempDir } from '../helpers/cli.js';
import { draft07Validator } from '../helpers/schema.js';

const validate = draft07Validator(JSON.parse(readFileSync(join(REPO, 'cli/reports/findings-report.schema.json'), 'utf8')) as object);

const DEMO = join(REPO, 'sample-catalogs/thistlewood-dr1');
let dir = '';
let inputs: string[] = [];


beforeAll(() => {
  dir = tempDir();
  // Eight inputs: the demo in four formats and the CSV cut into four pieces (each with the header).
  const lines = readFileSync(`${DEMO}.csv`, 'utf8').split('\n');
  const header = lines.findIndex((l) => !l.startsWith('#'));
  const body = lines.slice(header + 1).filter((l) => l !== '');
  const pieces = [0, 1, 2, 3].map((k) => {
    const p = join(dir, `part${k}.csv`);
    writeFileSync(p, [lines[header], ...body.slice(k * 750, (k + 1) * 750)].join('\n') + '\n');
    return p;
  });
  inputs = [`${DEMO}.csv`, pieces[0], `${DEMO}.arrow`, pieces[1], `${DEMO}.fits`, pieces[2], `${DEMO}.vot`, pieces[3]];
});

describe('sharded runs', () => {
  it('merge 1, 3 and 7 shards into the report of one run', () => {
    const whole = join(dir, 'whole.json');
    const one = cli(['check', ...inputs, '--report', whole, '--quiet']);
    expect(one.code).toBe(1);
    const expected = comparableReport(whole);
    for (const n of [1, 3, 7]) {
      const parts = checkInShards(inputs, n, join(dir, `s${n}`));
      const merged = join(dir, `merged-${n}.json`);
      // Any order of the shard reports will do.
      const m = cli(['merge', ...parts.reverse(), '--report', merged, '--quiet']);
      expect(m.stderr).toBe('');
      expect(m.code).toBe(one.code);
      expect(comparableReport(merged)).toEqual(expected);
      // Shard reports and the merged report are reports like any other.
      for (const p of [merged, parts[0]]) expect(validate(JSON.parse(readFileSync(p, 'utf8'))), JSON.stringify(validate.errors?.slice(0, 2))).toBe(true);
    }
  }, 240_000);

  it('refuses a merge with a shard missing, given twice, or from another run', () => {
    const a = join(dir, 'a.json');
    const b = join(dir, 'b.json');
    cli(['check', ...inputs.slice(0, 4), '--shard', '1/2', '--report', a, '--quiet']);
    cli(['check', ...inputs.slice(0, 3), '--shard', '2/2', '--report', b, '--quiet']);
    const missing = cli(['merge', a, '--report', join(dir, 'x.json')]);
    expect(missing.code).toBe(2);
    expect(missing.stderr).toMatch(/shard 2 of 2 missing/);
    expect(cli(['merge', a, a, '--report', join(dir, 'x.json')]).stderr).toMatch(/given twice/);
    expect(cli(['merge', a, b, '--report', join(dir, 'x.json')]).stderr).toMatch(/another run/);
    expect(cli(['check', `${DEMO}.csv`, '--shard', '3/2']).stderr).toMatch(/--shard needs K\/N/);
  }, 120_000);
});
