import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { REPO, checkWithReport, cli, type Report } from '../helpers/cli.js';
import { draft07Validator } from '../helpers/schema.js';

interface Planted {
  row: number;
  id: string;
  kind: string;
  expect: { rule: string; severity: string }[];
  alsoAllowed: string[];
}
const truth = JSON.parse(readFileSync(join(REPO, 'sample-catalogs/thistlewood-dr1.truth.json'), 'utf8')) as { rows: number; planted: Planted[] };
const csv = checkWithReport(['sample-catalogs/thistlewood-dr1.csv', '--fail-on', 'never']);
const arrow = checkWithReport(['sample-catalogs/thistlewood-dr1.arrow', '--fail-on', 'never']);

describe('the demo catalog against its ground truth', () => {
  it('reads every row', () => {
    expect(csv.code).toBe(0);
    expect(csv.report.inputs[0].rows).toBe(truth.rows);
    expect(csv.report.inputs[0].records).toBe(truth.rows);
    expect(csv.report.inputs[0].unparseableRecords).toBe(0);
  });

  it('finds every planted error with the right rule and severity', () => {
    for (const p of truth.planted) {
      for (const e of p.expect) {
        const hit = csv.report.findings.find((f) => f.row === p.row && f.rule === e.rule && f.severity === e.severity);
        expect(hit, `${p.kind} at row ${p.row} (${p.id}) should give ${e.rule} ${e.severity}`).toBeDefined();
        expect(hit!.id).toBe(p.id);
      }
    }
  });

  it('makes no finding that the ground truth does not explain', () => {
    const byRow = new Map(truth.planted.map((p) => [p.row, p]));
    for (const f of csv.report.findings) {
      expect(f.scope, f.message).toBe('row');
      const p = byRow.get(f.row!);
      expect(p, `unexpected ${f.rule} ${f.severity} at row ${f.row}: ${f.message}`).toBeDefined();
      const allowed = [...p!.expect.map((e) => e.rule), ...p!.alsoAllowed];
      expect(allowed, `row ${f.row} (${p!.kind}) got ${f.rule}: ${f.message}`).toContain(f.rule);
    }
  });

  it('gives the same findings from the CSV and the Arrow file', () => {
    // Lines exist only in text formats, and fingerprints name the input file.
    const strip = (r: Report) => r.findings.map((f) => ({ ...f, line: null, fingerprint: null }));
    expect(strip(arrow.report)).toEqual(strip(csv.report));
    expect(arrow.report.inputs[0].rows).toBe(truth.rows);
  });

  it('suggests the corrected value for unit slips', () => {
    const slips = csv.report.findings.filter((f) => f.rule === 'luminosity-unit-mixup');
    expect(slips.length).toBeGreaterThan(0);
    for (const f of slips) expect(f.suggestion?.unit).toBe('solLum');
  });

  it('writes a report that validates against its own schema', () => {
    const schema = JSON.parse(readFileSync(join(REPO, 'cli/reports/findings-report.schema.json'), 'utf8'));
    const validate = draft07Validator(schema);
    for (const r of [csv.report, arrow.report]) {
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
