/**
 * Atomic output: a run killed midway (SIGTERM, SIGINT) leaves the reports of an earlier run
 * exactly as they were, says so in one line, and leaves no temporary file behind; nothing is ever
 * written next to the input.
 */
import { spawn } from 'node:child_process';
import { closeSync, mkdirSync, openSync, readFileSync, readdirSync, rmSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { REPO, cli, tempDir } from '../helpers/cli.js';
import { STACK_FRAME } from './run-cli.js';

const ROWS = 400_000;

/**
 * A big plain catalog, quickly: main-sequence-like rows around the Sun (IAU 2015 B3 nominal
 * values) with a spread, no planted errors. Written in blocks, never one string.
 */
function writeBigCsv(path: string, rows: number): void {
  const fd = openSync(path, 'w');
  try {
    writeSync(fd, 'id,mass_Msun,lum_Lsun,radius_Rsun,teff_K\n');
    for (let first = 0; first < rows; first += 10_000) {
      let s = '';
      for (let i = first; i < Math.min(rows, first + 10_000); i++) {
        const m = 0.5 + (i % 97) / 97;
        s += `s${i},${m.toFixed(3)},${(m ** 4).toFixed(4)},${(m ** 0.8).toFixed(3)},${Math.round(5772 * m ** 0.5)}\n`;
      }
      writeSync(fd, s);
    }
  } finally {
    closeSync(fd);
  }
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

interface Killed {
  code: number | null;
  signal: NodeJS.Signals | null;
  stderr: string;
  sawTemp: string[];
}

/** Starts a check, waits until its temporary report exists, sends `sig`, and waits for the end. */
async function killMidway(args: string[], outDir: string, sig: NodeJS.Signals): Promise<Killed> {
  const child = spawn(process.execPath, [join(REPO, 'bin/starsieve.js'), ...args], {
    cwd: REPO,
    env: { ...process.env, NO_COLOR: '1' },
    stdio: ['ignore', 'ignore', 'pipe'],
  });
  let stderr = '';
  child.stderr.setEncoding('utf8').on('data', (s: string) => (stderr += s));
  const ended = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((done) => child.on('close', (code, signal) => done({ code, signal })));
  let sawTemp: string[] = [];
  const deadline = Date.now() + 30_000;
  while (Date.now() < deadline && child.exitCode === null) {
    sawTemp = readdirSync(outDir).filter((f) => f.endsWith('.tmp'));
    if (sawTemp.length > 0) break;
    await sleep(50);
  }
  // Let it get into the rows, so the kill lands mid-run with findings half written.
  await sleep(400);
  child.kill(sig);
  const end = await ended;
  return { ...end, stderr, sawTemp };
}

describe('atomic output', () => {
  let root = '';
  let inputs = '';
  let out = '';
  let big = '';
  let before: Record<string, string> = {};
  let inputListing: string[] = [];

  beforeAll(() => {
    root = tempDir();
    inputs = join(root, 'inputs');
    out = join(root, 'out');
    mkdirSync(inputs);
    mkdirSync(out);
    big = join(inputs, 'big.csv');
    writeBigCsv(big, ROWS);
    // The earlier reports: a finished run over the demo catalog, to the same paths.
    const r = cli(['check', 'sample-catalogs/thistlewood-dr1.csv', ...reportArgs(), '--quiet', '--fail-on', 'never']);
    expect(r.code, r.stderr).toBe(0);
    before = Object.fromEntries(readdirSync(out).map((f) => [f, readFileSync(join(out, f), 'utf8')]));
    inputListing = readdirSync(inputs).sort();
  }, 120_000);

  afterAll(() => {
    if (root) rmSync(root, { recursive: true, force: true });
  });

  const reportArgs = () => ['--report', join(out, 'report.json'), '--sarif', join(out, 'report.sarif'), '--html', join(out, 'report.html')];

  for (const sig of ['SIGTERM', 'SIGINT'] as const) {
    it(`${sig} midway leaves the earlier reports intact, exits with a clear message and leaves no temporary file`, async () => {
      const k = await killMidway(['check', big, ...reportArgs(), '--quiet', '--fail-on', 'never'], out, sig);
      // The temporary files were where the reports go (never next to the input), named after the target.
      expect(k.sawTemp.length, 'the run should have started writing before the kill').toBeGreaterThan(0);
      for (const t of k.sawTemp) expect(t).toMatch(/^\.report\.(json|sarif)\.\d+\.tmp$/);
      // 128 + the signal number is the shell's convention; the run uses 130 for both.
      expect(k.signal).toBeNull();
      expect(k.code).toBe(130);
      const lines = k.stderr.trim().split('\n');
      expect(lines).toHaveLength(1);
      expect(lines[0]).toBe(`starsieve: interrupted by ${sig}; no report written, any earlier report is left as it was`);
      expect(k.stderr).not.toMatch(STACK_FRAME);
      // The earlier reports are byte for byte what they were, and still parse.
      const after = Object.fromEntries(readdirSync(out).map((f) => [f, readFileSync(join(out, f), 'utf8')]));
      expect(Object.keys(after).sort()).toEqual(Object.keys(before).sort());
      for (const [f, text] of Object.entries(before)) expect(after[f] === text, `${f} changed`).toBe(true);
      expect(JSON.parse(after['report.json']).format).toBe('starsieve-findings');
      expect(JSON.parse(after['report.sarif']).version).toBe('2.1.0');
      // Nothing was written into the input's folder.
      expect(readdirSync(inputs).sort()).toEqual(inputListing);
    }, 90_000);
  }

  it('a finished run replaces the reports whole, and still writes nothing next to the input', () => {
    const small = join(root, 'small.csv');
    const fd = openSync(small, 'w');
    writeSync(fd, 'id,mass_Msun,lum_Lsun\nsun,1,1\n');
    closeSync(fd);
    const r = cli(['check', small, ...reportArgs(), '--quiet', '--fail-on', 'never']);
    expect(r.code, r.stderr).toBe(0);
    expect(readdirSync(out).filter((f) => f.endsWith('.tmp'))).toEqual([]);
    expect(JSON.parse(readFileSync(join(out, 'report.json'), 'utf8')).inputs[0].rows).toBe(1);
    expect(readdirSync(inputs).sort()).toEqual(inputListing);
    expect(readdirSync(root).sort()).toEqual(['inputs', 'out', 'small.csv']);
  });
});
