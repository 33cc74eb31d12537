/**
 * One CSV file cut into byte ranges, for threads (`--jobs N`) and for shards of one file
 * (`--shard K/N`, then `merge`), must give the findings and accounting of one pass. The inputs
 * are the bundled sample catalog and variants of it with CRLF line ends, blank lines in the data,
 * and quoted ids that hold a line break (cuts must never fall inside those).
 */
import { readFileSync, writeFileSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import { ALL_RULES } from '../../rules/checks/index.js';
import { selectRules } from '../../rules/engine/runner.js';
import type { Finding } from '../../rules/engine/types.js';
import { RANGES_MIN_JOBS, runInputs, runSplit, type InputResult, type RunInputsOptions } from '../../cli/commands/run-inputs.js';
import { csvLayout, planRanges, shardRange } from '../../cli/readers/byte-range.js';
import { openCatalog } from '../../cli/readers/open.js';
import { REPO, checkInShards, cli, comparableReport, tempDir } from '../helpers/cli.js';
import { draft07Validator } from '../helpers/schema.js';

const DEMO = join(REPO, 'sample-catalogs/thistlewood-dr1.csv');
const validate = draft07Validator(JSON.parse(readFileSync(join(REPO, 'cli/reports/findings-report.schema.json'), 'utf8')) as object);
let dir = '';
let variants: Record<string, string> = {};

beforeAll(() => {
  dir = tempDir();
  const text = readFileSync(DEMO, 'utf8');
  const lines = text.split('\n');
  const header = lines.findIndex((l) => !l.startsWith('#'));
  const crlf = join(dir, 'crlf.csv');
  writeFileSync(crlf, text.replace(/\n/g, '\r\n'));
  // Blank lines scattered through the data, and every 25th id quoted with a line break inside.
  const mixed = lines.map((l, i) => {
    if (i <= header || l === '') return l;
    const cells = l.split(',');
    if (i % 25 === 0) cells[0] = `"${cells[0]}\nsecond line"`;
    else if (i % 7 === 0) cells[0] = `"${cells[0]}"`;
    return cells.join(',') + (i % 101 === 0 ? '\n' : '');
  });
  const quoted = join(dir, 'quoted.csv');
  writeFileSync(quoted, mixed.join('\n'));
  variants = { 'the sample catalog': DEMO, 'CRLF line ends': crlf, 'blank lines and quoted line breaks': quoted };
});

function options(path: string, jobs: number, findings: Finding[]): RunInputsOptions {
  return {
    paths: [path],
    rules: selectRules(ALL_RULES, {}),
    selection: {},
    bind: { bind: {}, units: {} },
    batchSize: 300,
    jobs,
    threadMinBytes: 0,
    sink: { push: (f) => findings.push(f) },
  };
}

async function check(path: string, jobs: number): Promise<{ findings: Finding[]; results: InputResult[] }> {
  const findings: Finding[] = [];
  const results = await runInputs(options(path, jobs, findings));
  return { findings, results };
}

/** The same input in `jobs` byte ranges; fails when the file would not be split. */
async function inRanges(path: string, jobs: number): Promise<{ findings: Finding[]; results: InputResult[] }> {
  const findings: Finding[] = [];
  const result = await runSplit(0, options(path, jobs, findings), jobs);
  expect(result, `${path} is cut into ${jobs} ranges`).not.toBeNull();
  return { findings, results: [result!] };
}

async function layoutOf(path: string) {
  const reader = await openCatalog(path);
  try {
    return (await csvLayout(reader))!;
  } finally {
    await reader.close();
  }
}

describe('byte ranges of one CSV file', () => {
  it('are cut after line ends where no quoted field is open', async () => {
    const path = variants['blank lines and quoted line breaks'];
    const bytes = readFileSync(path);
    const layout = await layoutOf(path);
    expect(layout.headerLines).toBeGreaterThan(5);
    const ranges = (await planRanges(layout, 5))!;
    expect(ranges.length).toBe(5);
    expect(ranges[0].start).toBe(layout.dataStart);
    expect(ranges.at(-1)!.end).toBe(bytes.length);
    for (let k = 1; k < ranges.length; k++) {
      expect(ranges[k].start).toBe(ranges[k - 1].end);
      expect(bytes[ranges[k].start - 1]).toBe(10);
      const before = bytes.subarray(0, ranges[k].start);
      expect(before.filter((b) => b === 34).length % 2, `cut ${k} is outside quotes`).toBe(0);
    }
  });

  it('are refused for text that is not UTF-8', async () => {
    const latin = join(dir, 'latin1.csv');
    writeFileSync(latin, Buffer.concat([readFileSync(DEMO), Buffer.from('TSC-x,\xe9\n', 'latin1')]));
    const layout = await layoutOf(latin);
    expect(await planRanges(layout, 2)).toBeNull();
  });

  for (const what of ['the sample catalog', 'CRLF line ends', 'blank lines and quoted line breaks']) {
    it(`checked in 2 and 3 threads gives the findings of one thread (${what})`, async () => {
      const path = variants[what];
      const one = await check(path, 1);
      expect(one.findings.length).toBeGreaterThan(100);
      for (const jobs of [2, 3]) {
        const many = await inRanges(path, jobs);
        expect(many.findings).toEqual(one.findings);
        expect(many.results).toEqual(one.results);
      }
      // And through the command's own choice (ranges from RANGES_MIN_JOBS threads, else the pipeline).
      expect((await check(path, RANGES_MIN_JOBS)).findings).toEqual(one.findings);
      expect((await check(path, 2)).findings).toEqual(one.findings);
    }, 120_000);
  }
});


describe('shards of one CSV file', () => {
  it('merge 1, 3 and 7 byte-range shards into the report of one run', () => {
    for (const path of [DEMO, variants['blank lines and quoted line breaks']]) {
      const whole = join(dir, 'whole.json');
      const one = cli(['check', path, '--report', whole, '--quiet', '--jobs', '1']);
      expect(one.stderr).toBe('');
      const expected = comparableReport(whole);
      for (const n of [1, 3, 7]) {
        const parts = checkInShards([path, '--jobs', '1'], n, join(dir, `r${n}`));
        if (n > 1) for (const p of parts) expect(existsSync(`${p}.state`)).toBe(true);
        const merged = join(dir, `rmerged-${n}.json`);
        const m = cli(['merge', ...parts.reverse(), '--report', merged, '--quiet']);
        expect(m.stderr).toBe('');
        expect(m.code).toBe(one.code);
        expect(comparableReport(merged)).toEqual(expected);
        for (const p of [merged, parts[0]]) expect(validate(JSON.parse(readFileSync(p, 'utf8'))), JSON.stringify(validate.errors?.slice(0, 2))).toBe(true);
      }
    }
  }, 240_000);

  it('fit the catalog relation over the whole file in every shard (--relation catalog), as one run does', () => {
    const whole = join(dir, 'whole-catalog.json');
    const one = cli(['check', DEMO, '--relation', 'catalog', '--report', whole, '--quiet']);
    expect(one.stderr).toBe('');
    const parts = checkInShards([DEMO, '--relation', 'catalog'], 3, join(dir, 'cat'));
    const merged = join(dir, 'cat-merged.json');
    expect(cli(['merge', ...parts, '--report', merged, '--quiet']).stderr).toBe('');
    expect(comparableReport(merged)).toEqual(comparableReport(whole));
  }, 120_000);

  it('stops a shard whose range would end inside a quoted field, with one line and no report', () => {
    const lines = readFileSync(DEMO, 'utf8').split('\n');
    const header = lines.findIndex((l) => !l.startsWith('#'));
    const body = lines.slice(header + 1).filter((l) => l !== '');
    // One id in the middle of the file runs over many lines, so the cut falls inside it.
    const mid = Math.floor(body.length / 2);
    const cells = body[mid].split(',');
    cells[0] = `"${cells[0]}${'\nmore text of a long note'.repeat(4000)}"`;
    body[mid] = cells.join(',');
    const path = join(dir, 'long-quote.csv');
    writeFileSync(path, [...lines.slice(0, header + 1), ...body].join('\n') + '\n');
    const first = cli(['check', path, '--shard', '1/2', '--report', join(dir, 'q1.json'), '--quiet']);
    expect(first.code).toBe(2);
    expect(first.stderr).toMatch(/ends inside a quoted field/);
    expect(first.stderr).not.toMatch(/\n\s+at /);
    // The next range starts inside the same field, so it stops too; neither writes a report.
    const second = cli(['check', path, '--shard', '2/2', '--report', join(dir, 'q2.json'), '--quiet']);
    expect(second.code).toBe(2);
    expect(second.stderr).toMatch(/ends inside a quoted field/);
    expect(existsSync(join(dir, 'q1.json')) || existsSync(join(dir, 'q2.json'))).toBe(false);
  }, 60_000);

  it('cuts every shard at the same line ends, covering the data once', async () => {
    const layout = await layoutOf(DEMO);
    for (const n of [2, 3, 7]) {
      const ranges = await Promise.all(Array.from({ length: n }, (_, k) => shardRange(layout, k, n)));
      expect(ranges[0].start).toBe(layout.dataStart);
      expect(ranges.at(-1)!.end).toBe(readFileSync(DEMO).length);
      for (let k = 1; k < n; k++) expect(ranges[k].start).toBe(ranges[k - 1].end);
    }
  });
});
