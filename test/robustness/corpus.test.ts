/**
 * The broken-input corpus through the real command line. Every case ends one of two ways: the
 * run goes on and the damage is a finding (or note) at its line, or the run stops with one line
 * on stderr that names the position, and exit code 2. Never a stack trace, never a hang.
 */
import { existsSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { tempDir, type Report } from '../helpers/cli.js';
import { CASES, FIXTURE_DIR, fixtureReadme, makeBroken } from './make-broken.js';
import { STACK_FRAME, pool, runCli, type TimedResult } from './run-cli.js';

/** Generous: a case that takes this long is a hang, not a slow machine. */
const CASE_TIMEOUT_MS = 20_000;

type Outcome =
  | { stops: RegExp; position: RegExp | null }
  | { goesOn: (r: Report, result: TimedResult) => void };

const rowFindings = (r: Report, rule: string) => r.findings.filter((f) => f.rule === rule && f.scope === 'row');
const linesOf = (r: Report, rule: string) => rowFindings(r, rule).map((f) => f.line);
const notes = (r: Report) => r.inputs[0].notes.join('\n');
const counts = (r: Report) => ({ records: r.inputs[0].records, rows: r.inputs[0].rows, unparseable: r.inputs[0].unparseableRecords });

const OUTCOMES: Record<string, Outcome> = {
  // Nothing to point at in an empty file: the message says it is empty.
  'empty.csv': { stops: /no header row found \(the input is empty/, position: null },
  'header-only.csv': {
    goesOn: (r) => {
      expect(counts(r)).toEqual({ records: 0, rows: 0, unparseable: 0 });
      expect(r.findings).toEqual([]);
    },
  },
  'ragged.csv': {
    goesOn: (r) => {
      expect(counts(r)).toEqual({ records: 5, rows: 5, unparseable: 0 });
      expect(linesOf(r, 'malformed-row')).toEqual([3, 5]);
      expect(rowFindings(r, 'malformed-row')[0].message).toMatch(/3 fields, header has 5/);
      expect(rowFindings(r, 'malformed-row')[1].message).toMatch(/7 fields, header has 5; the extra 2 were dropped/);
    },
  },
  'unterminated-quote.csv': {
    goesOn: (r) => {
      // The broken last line is counted as a record that made no row, with a finding at its line;
      // the two before it are checked.
      expect(counts(r)).toEqual({ records: 3, rows: 2, unparseable: 1 });
      expect(linesOf(r, 'malformed-row')).toEqual([4]);
    },
  },
  'nul-bytes.csv': {
    goesOn: (r) => {
      expect(counts(r)).toEqual({ records: 6, rows: 6, unparseable: 0 });
      // The line of NULs is one field of a five-column header.
      expect(linesOf(r, 'malformed-row')).toEqual([4]);
      // `1\0` and `\01` are not numbers (a NUL first once sent the cell parser into endless recursion).
      expect(linesOf(r, 'unparseable-value')).toEqual([6, 7]);
    },
  },
  'huge-field.csv': {
    goesOn: (r) => {
      // The 10 MB line passes the 8 MiB record cap: it is skipped, the rows after it are read.
      expect(counts(r)).toEqual({ records: 3, rows: 2, unparseable: 1 });
      expect(linesOf(r, 'malformed-row')).toEqual([3]);
    },
  },
  'latin1.csv': {
    goesOn: (r) => {
      expect(counts(r)).toEqual({ records: 3, rows: 3, unparseable: 0 });
      expect(notes(r)).toMatch(/not valid UTF-8 \(byte 49, on line 1, cannot be UTF-8\), so it was read as Windows-1252 \/ Latin-1/);
    },
  },
  ...Object.fromEntries(
    ['utf16le-bom', 'utf16be-bom', 'utf16le-nobom', 'utf16be-nobom'].map((name) => [
      `${name}.csv`,
      {
        goesOn: (r: Report) => {
          expect(counts(r)).toEqual({ records: 3, rows: 3, unparseable: 0 });
          expect(r.bindings[0].columns.map((c) => c.quantity).sort()).toEqual(['id', 'luminosity', 'mass', 'radius', 'teff']);
          expect(notes(r)).toMatch(new RegExp(`read as UTF-16 ${name.includes('le') ? 'little' : 'big'}-endian`));
          expect(r.findings).toEqual([]);
        },
      } satisfies Outcome,
    ]),
  ),
  'utf32le-bom.csv': { stops: /is UTF-32 \(little-endian byte-order mark\), which starsieve does not read; convert it to UTF-8 first/, position: /byte 0/ },
  'cr-only.csv': {
    goesOn: (r) => {
      expect(counts(r)).toEqual({ records: 4, rows: 4, unparseable: 0 });
      // Lone CRs are line ends: the short last row is on line 5.
      expect(linesOf(r, 'malformed-row')).toEqual([5]);
    },
  },
  'duplicate-names.csv': {
    goesOn: (r) => {
      expect(counts(r)).toEqual({ records: 2, rows: 2, unparseable: 0 });
      expect(notes(r)).toMatch(/column 3 repeats the name 'mass_Msun' of column 2; it is called mass_Msun_2/);
      expect(notes(r)).toMatch(/column 4 has no name in the header; it is called column_4/);
    },
  },
  'odd-numbers.csv': {
    goesOn: (r) => {
      expect(counts(r)).toEqual({ records: 7, rows: 7, unparseable: 0 });
      const unparseable = rowFindings(r, 'unparseable-value');
      // Decimal commas are never guessed: `1,23` and `3,828e26` are reported, not read as 123 or 3828e26.
      expect(unparseable.map((f) => [f.line, f.columns[0]])).toEqual([
        [2, 'mass_Msun'],
        [2, 'lum_W'],
      ]);
      // `1.0D+26` is read (Fortran exponent) with one column note.
      expect(r.findings.some((f) => f.rule === 'unparseable-value' && f.scope === 'column' && /Fortran D exponent/.test(f.message))).toBe(true);
      // `+inf` is read as infinity, and no star is that bright.
      expect(r.findings.filter((f) => f.line === 4 && f.severity === 'error').length).toBeGreaterThan(0);
      // NaN, `--` and nan are missing values: no finding on their lines.
      expect(r.findings.filter((f) => f.line !== null && f.line >= 5 && f.rule === 'unparseable-value')).toEqual([]);
    },
  },
  'really-html.csv': { stops: /this is an HTML page, not a CSV table \(it starts with "<!DOCTYPE html>"\)/, position: /line 1/ },
  'really-html-plain.csv': { stops: /this is an HTML page, not a CSV table \(it starts with "<html>"\)/, position: /line 1/ },
  'arrow-cut.arrow': { stops: /truncated or damaged Arrow IPC file: .*footer is missing/, position: /byte \d+/ },
  'arrow-stream-cut.arrows': { stops: /cannot read the Arrow data after row \d+ \(truncated or not Arrow IPC\?\)/, position: /row \d+/ },
  'arrow-schema-change.arrows': { stops: /the schema changes .*after row 3.*one input must hold one table/, position: /row 4/ },
  'fits-naxis2-too-big.fits': { stops: /truncated file: HDU 1 promises 90 rows of 38 bytes, but the file ends after 75 complete rows/, position: /byte \d+, row 76/ },
  'fits-no-end.fits': { stops: /the file ends inside HDU 1's header \(no END card\)/, position: /byte 5760/ },
  'fits-truncated.fits': { stops: /truncated file: HDU 1 promises 500 rows/, position: /byte \d+/ },
  'votable-unclosed.vot': { stops: /not well-formed XML: unclosed tag: TD/, position: /line \d+, column \d+/ },
  'votable-mismatched.vot': { stops: /not well-formed XML: unexpected close tag/, position: /line \d+, column \d+/ },
  'votable-bad-base64.vot': { stops: /the STREAM is not valid base64 \(character "!"\)/, position: /line \d+/ },
  'gzip-cut.csv.gz': { stops: /the gzip data is damaged or truncated \(unexpected end of file\) after \d+ decompressed bytes/, position: /line \d+/ },
  'latin1-late.csv': {
    goesOn: (r) => {
      expect(counts(r)).toEqual({ records: 302, rows: 302, unparseable: 0 });
      expect(notes(r)).toMatch(/not valid UTF-8 from byte \d+ \(line 302\); such bytes were read as U\+FFFD/);
    },
  },
  'latin1-late.csv.gz': {
    goesOn: (r) => {
      expect(counts(r)).toEqual({ records: 302, rows: 302, unparseable: 0 });
      // The header is line 1 and 300 rows follow, so the bad byte sits on line 302.
      expect(notes(r)).toMatch(/not valid UTF-8 from byte \d+ \(line 302\); such bytes were read as U\+FFFD/);
    },
  },
  'gzip-bomb.csv.gz': { stops: /decompresses to more than 67108864 bytes .*decompression bomb, so reading stopped/, position: /line \d+|decompressed byte \d+/ },
};

/** Runs that go on are checked together, one input each in one report, to save start-ups; these stand alone. */
const ALONE = new Set(['huge-field.csv']);

/** One input's part of a report with several inputs, shaped as if it had been checked alone. */
function part(report: Report, index: number): Report {
  return {
    ...report,
    inputs: [report.inputs[index]],
    bindings: [report.bindings[index]],
    findings: report.findings.filter((f) => f.input === index),
  };
}

describe('the broken-input corpus', () => {
  let dir = '';
  let out = '';
  const results = new Map<string, TimedResult & { report: Report | null }>();

  beforeAll(async () => {
    dir = tempDir();
    out = tempDir();
    const paths = await makeBroken(dir, { large: true });
    const names = [...paths.keys()];
    const together = names.filter((n) => 'goesOn' in OUTCOMES[n] && !ALONE.has(n));
    const alone = names.filter((n) => !together.includes(n));
    const jobs: string[][] = [together, ...alone.map((n) => [n])];
    const runs = await pool(jobs, 2, async (group) => {
      const report = join(out, `${group[0]}.report.json`);
      const args = ['check', ...group.map((n) => paths.get(n)!), '--report', report, '--quiet', '--fail-on', 'never'];
      const r = await runCli(args, CASE_TIMEOUT_MS * (group.length > 1 ? 2 : 1));
      return { ...r, report: existsSync(report) ? (JSON.parse(readFileSync(report, 'utf8')) as Report) : null };
    });
    jobs.forEach((group, i) => {
      const r = runs[i];
      group.forEach((name, k) => results.set(name, { ...r, report: r.report && group.length > 1 ? part(r.report, k) : r.report }));
    });
  }, 240_000);

  afterAll(() => {
    for (const d of [dir, out]) if (d) rmSync(d, { recursive: true, force: true });
  });

  it('has an expected outcome for every case, and no outcome without a case', () => {
    expect(Object.keys(OUTCOMES).sort()).toEqual(CASES.map((c) => c.file).sort());
  });

  for (const c of CASES) {
    it(`${c.file}: ${c.what}`, () => {
      const r = results.get(c.file)!;
      expect(r.timedOut, `${c.file} ran past ${CASE_TIMEOUT_MS} ms`).toBe(false);
      expect(r.stderr).not.toMatch(STACK_FRAME);
      expect(r.stderr).not.toMatch(/internal error/);
      const outcome = OUTCOMES[c.file];
      if ('stops' in outcome) {
        expect(r.code, r.stderr).toBe(2);
        const lines = r.stderr.trim().split('\n');
        expect(lines, r.stderr).toHaveLength(1);
        expect(lines[0]).toMatch(/^starsieve: /);
        expect(lines[0]).toContain(c.file);
        expect(r.ms).toBeLessThan(CASE_TIMEOUT_MS);
        expect(lines[0]).toMatch(outcome.stops);
        if (outcome.position) expect(lines[0]).toMatch(outcome.position);
        expect(r.report, 'no report is written for a run that stops').toBeNull();
      } else {
        expect(r.code, r.stderr).toBe(0);
        expect(r.stderr).toBe('');
        expect(r.report).not.toBeNull();
        const inp = r.report!.inputs[0];
        expect(inp.records).toBe(inp.rows + inp.unparseableRecords);
        for (const f of r.report!.findings) if (f.scope === 'row') expect(f.line).toBeGreaterThanOrEqual(1);
        outcome.goesOn(r.report!, r);
      }
    });
  }

  it('the committed copies in test/fixtures/broken are what the generator makes', async () => {
    const fresh = tempDir();
    try {
      const made = await makeBroken(fresh);
      const stale: string[] = [];
      for (const [name, path] of made) {
        const committed = join(FIXTURE_DIR, name);
        if (!existsSync(committed)) stale.push(`${name} (missing)`);
        // gzip output can differ between zlib versions; the file only has to exist.
        else if (!name.endsWith('.gz') && !readFileSync(committed).equals(readFileSync(path))) stale.push(name);
      }
      if (readFileSync(join(FIXTURE_DIR, 'README.md'), 'utf8') !== fixtureReadme()) stale.push('README.md');
      expect(stale, 'run `npx tsx test/robustness/make-broken.ts` to remake test/fixtures/broken').toEqual([]);
    } finally {
      rmSync(fresh, { recursive: true, force: true });
    }
  });
});
