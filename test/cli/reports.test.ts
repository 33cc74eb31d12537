import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { Ajv as AjvCore } from 'ajv';
import { describe, expect, it } from 'vitest';
import { SHARED, checkWithReport, cli, tempDir } from '../helpers/cli.js';

const SCHEMA = join(SHARED, 'schemas/sarif-schema-2.1.0.json');
const DEMO = 'sample-catalogs/thistlewood-dr1.csv';

async function sarifValidator() {
  // The OASIS SARIF 2.1.0 schema (errata01) is draft-04: ajv-draft-04 with the standard formats
  // (ecosystem-notes.md §3.7).
  const Ajv04 = ((await import('ajv-draft-04')) as unknown as { default: typeof AjvCore }).default;
  const formats = (await import('ajv-formats')) as unknown as { default: (a: AjvCore) => void };
  const ajv = new Ajv04({ allErrors: true, strict: false, unicodeRegExp: false } as never);
  formats.default(ajv);
  return ajv.compile(JSON.parse(readFileSync(SCHEMA, 'utf8')));
}

describe('SARIF', () => {
  const dir = tempDir();
  const path = join(dir, 'demo.sarif');
  const r = cli(['check', DEMO, '--sarif', path, '--quiet', '--fail-on', 'never']);
  const log = JSON.parse(readFileSync(path, 'utf8'));

  it.skipIf(!existsSync(SCHEMA))('validates against the OASIS SARIF 2.1.0 schema (skipped where ../shared/schemas is absent)', async () => {
    expect(r.code).toBe(0);
    const validate = await sarifValidator();
    expect(validate(log), JSON.stringify(validate.errors?.slice(0, 3))).toBe(true);
  });

  it('has one result per finding, located at the physical line, with rules and help text', () => {
    const { report } = checkWithReport([DEMO, '--fail-on', 'never']);
    const run = log.runs[0];
    expect(run.results).toHaveLength(report.findings.length);
    expect(run.tool.driver.rules.map((x: { id: string }) => x.id)).toContain('eddington-limit');
    for (const rule of run.tool.driver.rules) expect(rule.help.text.length).toBeGreaterThan(50);
    const first = run.results[0];
    const f = report.findings[0];
    expect(first.ruleId).toBe(f.rule);
    expect(first.level).toBe(f.severity);
    expect(first.locations[0].physicalLocation.region.startLine).toBe(f.line);
    expect(first.locations[0].physicalLocation.artifactLocation.uri).toBe(DEMO);
    expect(first.partialFingerprints['starsieveFinding/v1']).toBe((f as unknown as { fingerprint: string }).fingerprint);
  });

  it('percent-encodes input paths', () => {
    const d = tempDir();
    const p = join(d, 'my stars #1.csv');
    writeFileSync(p, 'id,mass_Msun,lum_Lsun\na,1,3.9e26\n');
    const out = join(d, 'x.sarif');
    cli(['check', p, '--sarif', out, '--quiet', '--fail-on', 'never']);
    const uri: string = JSON.parse(readFileSync(out, 'utf8')).runs[0].results[0].locations[0].physicalLocation.artifactLocation.uri;
    expect(uri).toMatch(/my%20stars%20%231\.csv$/);
  });
});

describe('fingerprints', () => {
  it('do not change when a row is inserted above', () => {
    const d = tempDir();
    const a = join(d, 'a.csv');
    const b = join(d, 'b.csv');
    writeFileSync(a, 'id,mass_Msun,lum_Lsun\nx,1,3.9e26\ny,1,70000\n');
    writeFileSync(b, 'id,mass_Msun,lum_Lsun\nnew,1,1\nx,1,3.9e26\ny,1,70000\n');
    // Same file name in both runs, as in two commits of one repository.
    const ra = checkWithReport([a, '--fail-on', 'never']).report.findings as unknown as { fingerprint: string; row: number }[];
    writeFileSync(a, readFileSync(b));
    const rb = checkWithReport([a, '--fail-on', 'never']).report.findings as unknown as { fingerprint: string; row: number }[];
    expect(rb.map((f) => f.fingerprint)).toEqual(ra.map((f) => f.fingerprint));
    expect(rb.map((f) => f.row)).toEqual(ra.map((f) => f.row + 1));
  });
});

describe('accepted findings and release comparison', () => {
  const d = tempDir();
  const cat = join(d, 'cat.csv');
  const rep1 = join(d, 'r1.json');
  const rep2 = join(d, 'r2.json');
  const acc = join(d, 'accepted.json');
  // x: a watts slip (error); y: above the X = 0 Eddington limit (error); z: clean.
  writeFileSync(cat, 'id,mass_Msun,lum_Lsun\nx,1,3.9e26\ny,1,70000\nz,1,1\n');

  it('accepted findings still count but do not fail the run; new ones do; stale entries are named', () => {
    expect(cli(['check', cat, '--report', rep1, '--quiet']).code).toBe(1);
    expect(cli(['accept', rep1, '--out', acc, '--reason', 'checked against the paper', '--by', 'curator']).code).toBe(0);
    const file = JSON.parse(readFileSync(acc, 'utf8'));
    expect(file.entries).toHaveLength(2);
    expect(file.entries[0]).toMatchObject({ reason: 'checked against the paper', acceptedBy: 'curator' });
    const again = checkWithReport([cat, '--accepted', acc]);
    expect(again.code).toBe(0);
    expect(again.report.summary.findings.error).toBe(2);
    expect((again.report.summary as unknown as { accepted: { matched: number } }).accepted.matched).toBe(2);
    // Fix x, break z: one accepted entry goes stale, one new error fails the run.
    writeFileSync(cat, 'id,mass_Msun,lum_Lsun\nx,1,1.02\ny,1,70000\nz,1,90000\n');
    const next = checkWithReport([cat, '--accepted', acc]);
    expect(next.code).toBe(1);
    const acc2 = (next.report.summary as unknown as { accepted: { matched: number; stale: { id: string }[] } }).accepted;
    expect(acc2.matched).toBe(1);
    expect(acc2.stale.map((e) => e.id)).toEqual(['x']);
    writeFileSync(rep2, JSON.stringify(next.report));
  });

  it('compare names new, fixed and unchanged findings, and fails on new errors', () => {
    const r = cli(['compare', rep1, rep2, '--json']);
    expect(r.code).toBe(1);
    const out = JSON.parse(r.stdout);
    expect(out.newFindings.map((f: { id: string }) => f.id)).toEqual(['z']);
    expect(out.fixedFindings.map((f: { id: string }) => f.id)).toEqual(['x']);
    expect(out.byRule['eddington-limit']).toEqual({ new: 1, fixed: 0, unchanged: 1 });
    expect(cli(['compare', rep1, rep1]).code).toBe(0);
  });

  it('rejects a broken accepted file with its position', () => {
    const bad = join(d, 'bad.json');
    writeFileSync(bad, '{"format": "starsieve-accepted",\n "version": 1, "entries": [ }');
    const r = cli(['check', cat, '--accepted', bad, '--quiet']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/bad\.json/);
    expect(r.stderr).toMatch(/line 2/);
  });
});

describe('HTML report', () => {
  it('escapes every catalog string: ids and column names cannot inject markup', () => {
    const d = tempDir();
    const cat = join(d, 'evil.csv');
    const html = join(d, 'evil.html');
    writeFileSync(cat, 'id,"mass_Msun<script>alert(1)</script>",lum_Lsun\n"<script>alert(\'x\')</script>",1,3.9e26\n"<img src=x onerror=alert(2)>",1,70000\n');
    const r = cli(['check', cat, '--html', html, '--quiet', '--fail-on', 'never', '--bind', 'mass_Msun<script>alert(1)</script>=mass']);
    expect(r.code, r.stderr).toBe(0);
    const page = readFileSync(html, 'utf8');
    expect(page).not.toMatch(/<script/i);
    expect(page).not.toMatch(/<img/i);
    expect(page).toContain('&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt;');
    expect(page).not.toMatch(/https?:\/\/(?!www\.w3\.org)/);
  });

  it('shows the summary, the bindings, findings by rule and both diagrams', () => {
    const d = tempDir();
    const html = join(d, 'demo.html');
    expect(cli(['check', DEMO, '--html', html, '--quiet', '--fail-on', 'never']).code).toBe(0);
    const page = readFileSync(html, 'utf8');
    for (const s of ['Mass-luminosity diagram', 'Hertzsprung-Russell diagram', 'Column bindings', 'eddington-limit', 'Eddington luminosity, X = 0', 'TWC-']) expect(page).toContain(s);
    expect((page.match(/<svg/g) ?? []).length).toBeGreaterThanOrEqual(2);
  });
});

describe('terminal output', () => {
  it('shows control characters from the catalog as escapes, so an id cannot rewrite the screen', () => {
    const dir = tempDir();
    const path = join(dir, 'hostile.csv');
    writeFileSync(path, 'star_id,mass_Msun,lum_Lsun\n"\x1b[2J\x1b[31mevil\x07",1,1\n"\x1b[2J\x1b[31mevil\x07",1,1\n');
    const r = cli(['check', path, '--fail-on', 'never']);
    expect(r.code).toBe(0);
    expect(r.stdout).not.toMatch(/[\x00-\x08\x0b-\x1f\x7f]/);
    expect(r.stdout).toContain('\\x1b[2J\\x1b[31mevil\\x07');
  });
});

describe('HTML diagram of the mass-luminosity plane', () => {
  it('draws the relation the rule judged by: the catalog fit per segment, the default relation elsewhere', async () => {
    const { massLuminosityOverlays } = await import('../../cli/reports/html.js');
    const { relationAt } = await import('../../rules/physics/relation-choice.js');
    const fit = [{ range: [0.179, 0.45] as [number, number], mode: 'line', slope: 2, intercept: -0.5, intrinsicScatterDex: 0.1 }];
    const o = massLuminosityOverlays('catalog', 3, fit);
    const mid = o.curves[0].points;
    const near = (x: number) => mid.reduce((a, p) => (Math.abs(p[0] - x) < Math.abs(a[0] - x) ? p : a));
    // Inside the fitted segment: log L = 2 log M - 0.5 (the fit's own line, no published relation).
    const inside = near(Math.log10(0.3));
    expect(inside[1]).toBeCloseTo(2 * inside[0] - 0.5, 6);
    // Outside it the default relation, as the rule falls back to it.
    const outside = near(0);
    const rel = { relation: '', logL: NaN, slope: NaN, scatter: NaN, brightAllowance: 0 };
    expect(relationAt('default', 10 ** outside[0], rel)).toBe(true);
    expect(outside[1]).toBeCloseTo(rel.logL, 6);
    // The band is the fit's intrinsic scatter times the threshold.
    const k = o.bands[0].lower.findIndex((p) => p[0] === inside[0]);
    expect(inside[1] - o.bands[0].lower[k][1]).toBeCloseTo(0.3, 6);
  });
});
