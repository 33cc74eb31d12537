import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import type { Finding } from '../../rules/engine/types.js';
import { REPO, checkWithReport, cli, type Report } from '../helpers/cli.js';
import { draft07Validator } from '../helpers/schema.js';

interface Planted {
  row: number;
  id: string;
  kind: string;
  column: string;
  original: number | string | null;
  expect: { rule: string; severity: string }[];
  alsoAllowed: string[];
  /** Column-scope findings (a sentinel note, the duplicate counts) the planted row must give. */
  expectColumn?: { rule: string; severity: string; column?: string }[];
  /** A text-level slip the Arrow file cannot hold (there it is a null). */
  csvOnly?: true;
}
const truth = JSON.parse(readFileSync(join(REPO, 'sample-catalogs/thistlewood-dr1.truth.json'), 'utf8')) as { rows: number; csvOnly: string; planted: Planted[] };
const csv = checkWithReport(['sample-catalogs/thistlewood-dr1.csv', '--fail-on', 'never']);
const arrow = checkWithReport(['sample-catalogs/thistlewood-dr1.arrow', '--fail-on', 'never']);
const byRow = new Map(truth.planted.map((p) => [p.row, p]));
const columnExpectations = truth.planted.flatMap((p) => p.expectColumn ?? []);

/** Whether a column-scope finding is the one an expectation describes. */
const matches = (f: Finding, e: { rule: string; severity: string; column?: string }) =>
  f.scope === 'column' && f.rule === e.rule && f.severity === e.severity && (e.column === undefined || f.columns.includes(e.column));

/** The expected findings of csvOnly rows: what the CSV has and the Arrow file cannot. */
const csvOnlyFinding = (f: Finding) => {
  const p = f.row === null ? undefined : byRow.get(f.row);
  return p?.csvOnly === true && p.expect.some((e) => e.rule === f.rule);
};

describe('the demo catalog against its ground truth', () => {
  it('reads every row', () => {
    expect(csv.code).toBe(0);
    expect(csv.report.inputs[0].rows).toBe(truth.rows);
    expect(csv.report.inputs[0].records).toBe(truth.rows);
    // Records cut short are still rows (their missing fields are empty), not unparseable records.
    expect(csv.report.inputs[0].unparseableRecords).toBe(0);
  });

  it('binds the parallax, distance and M_bol columns', () => {
    const bound = Object.fromEntries(csv.report.bindings[0].columns.map((c) => [c.quantity, `${c.column} ${c.unit}`]));
    expect(bound).toMatchObject({ parallax: 'parallax_mas mas', distance: 'dist_pc pc', mbol: 'mbol mag', stage: 'stage ' });
  });

  it('finds every planted error with the right rule and severity', () => {
    for (const p of truth.planted) {
      for (const e of p.expect) {
        const hit = csv.report.findings.find((f) => f.row === p.row && f.rule === e.rule && f.severity === e.severity);
        expect(hit, `${p.kind} at row ${p.row} (${p.id}) should give ${e.rule} ${e.severity}`).toBeDefined();
        expect(hit!.id).toBe(p.id);
      }
      for (const e of p.expectColumn ?? []) {
        expect(csv.report.findings.some((f) => matches(f, e)), `${p.kind} at row ${p.row} should give the ${e.rule} ${e.severity} for ${e.column ?? 'the input'}`).toBe(true);
      }
    }
  });

  it('exercises every rule that can fire on such a catalog', () => {
    const fired = new Set(csv.report.findings.map((f) => f.rule));
    const planted = new Set(truth.planted.flatMap((p) => [...p.expect.map((e) => e.rule), ...(p.expectColumn ?? []).map((e) => e.rule)]));
    expect([...planted].sort()).toEqual(csv.report.rules.map((r) => r.id).sort());
    for (const rule of planted) expect(fired.has(rule), rule).toBe(true);
  });

  it('makes no finding that the ground truth does not explain', () => {
    for (const f of csv.report.findings) {
      if (f.scope === 'column') {
        expect(columnExpectations.some((e) => matches(f, e)), `unexpected column finding ${f.rule} ${f.severity}: ${f.message}`).toBe(true);
        continue;
      }
      const p = byRow.get(f.row!);
      expect(p, `unexpected ${f.rule} ${f.severity} at row ${f.row}: ${f.message}`).toBeDefined();
      const allowed = [...p!.expect.map((e) => e.rule), ...p!.alsoAllowed];
      expect(allowed, `row ${f.row} (${p!.kind}) got ${f.rule}: ${f.message}`).toContain(f.rule);
    }
  });

  it('gives the same findings from the CSV and the Arrow file, but for the text-level slips', () => {
    // Lines exist only in text formats (also inside a column note's "first on row N (line M)"),
    // and fingerprints name the input file.
    const strip = (fs: Finding[]) => fs.map((f) => ({ ...f, line: null, fingerprint: null, message: f.message.replace(/ \(line \d+\)/g, '') }));
    expect(truth.csvOnly).toMatch(/Arrow/);
    const csvOnly = csv.report.findings.filter(csvOnlyFinding);
    expect(csvOnly.length).toBe(truth.planted.filter((p) => p.csvOnly).reduce((n, p) => n + p.expect.length, 0));
    expect(strip(arrow.report.findings)).toEqual(strip(csv.report.findings.filter((f) => !csvOnlyFinding(f))));
    for (const p of truth.planted.filter((x) => x.csvOnly)) expect(arrow.report.findings.filter((f) => f.row === p.row), `${p.kind} row ${p.row}`).toEqual([]);
    expect(arrow.report.inputs[0].rows).toBe(truth.rows);
  });

  it('suggests the corrected value for unit slips, sign slips and slipped decimal points', () => {
    const slips = csv.report.findings.filter((f) => f.rule === 'luminosity-unit-mixup');
    expect(slips.length).toBeGreaterThan(0);
    for (const f of slips) expect(f.suggestion?.unit).toBe('solLum');
    // For these kinds the finding that must fire points at the planted cell and suggests (to the
    // rounding of the written values) what it held before.
    const restoring = ['watts', 'erg', 'log-in-linear', 'mass-in-kg', 'radius-in-km', 'log-teff', 'logg-si', 'lum-times-ten', 'mass-radius-swap', 'logg-off', 'mbol-sign', 'mbol-one-mag', 'dist-in-kpc', 'negative-error'];
    let checked = 0;
    for (const p of truth.planted.filter((x) => restoring.includes(x.kind))) {
      const f = csv.report.findings.find((x) => x.row === p.row && x.rule === p.expect[0].rule)!;
      expect(f.suggestion?.column, `${p.kind} row ${p.row}`).toBe(p.column);
      expect(Math.abs(f.suggestion!.value / (p.original as number) - 1), `${p.kind} row ${p.row}: ${f.suggestion!.text}`).toBeLessThan(2e-3);
      expect(f.expected, `${p.kind} row ${p.row}`).not.toBeNull();
      checked++;
    }
    expect(checked).toBeGreaterThanOrEqual(restoring.length * 2);
  });

  it('writes a report that validates against its own schema', () => {
    const schema = JSON.parse(readFileSync(join(REPO, 'cli/reports/findings-report.schema.json'), 'utf8'));
    const validate = draft07Validator(schema);
    for (const r of [csv.report, arrow.report] as Report[]) {
      const ok = validate(r);
      expect(ok, JSON.stringify(validate.errors?.slice(0, 3))).toBe(true);
    }
  });

  it('states per rule how many rows were checked and skipped, adding up to the rows read', () => {
    for (const rule of csv.report.rules) {
      const pi = rule.perInput[0];
      const skipped = Object.values(pi.skipped).reduce((a, b) => a + b, 0);
      expect(pi.checked + skipped, rule.id).toBe(truth.rows);
    }
  });

  it('fails the run at the default fail level, since the planted errors are errors', () => {
    const r = cli(['check', 'sample-catalogs/thistlewood-dr1.csv', '--quiet']);
    expect(r.code).toBe(1);
  });
});
