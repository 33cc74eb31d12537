import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { checkWithReport, cli, tempDir } from '../helpers/cli.js';

const noStack = (s: string) => !/\n\s+at .+:\d+:\d+/.test(s);

function csvFile(text: string, name = 'cat.csv'): string {
  const p = join(tempDir(), name);
  writeFileSync(p, text);
  return p;
}

describe('command line', () => {
  it('exits 2 with one line and no stack trace for a missing file', () => {
    const r = cli(['check', 'no/such/file.csv']);
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/no\/such\/file\.csv/);
    expect(noStack(r.stderr)).toBe(true);
  });

  it('exits 2 for an unknown rule, a bad parameter and an unknown option', () => {
    for (const args of [
      ['check', 'sample-catalogs/thistlewood-dr1.csv', '--rules', 'no-such-rule'],
      ['check', 'sample-catalogs/thistlewood-dr1.csv', '--sigma', 'lots'],
      ['check', 'sample-catalogs/thistlewood-dr1.csv', '--param', 'eddington-limit.nope=1'],
      ['check', 'sample-catalogs/thistlewood-dr1.csv', '--fail-on', 'sometimes'],
      ['check', 'sample-catalogs/thistlewood-dr1.csv', '--frobnicate'],
    ]) {
      const r = cli(args);
      expect(r.code, args.join(' ')).toBe(2);
      expect(noStack(r.stderr)).toBe(true);
    }
  });

  it('exits 2 naming the column for an unknown unit', () => {
    const p = csvFile('id,mass,lum\na,1,1\n');
    const r = cli(['check', p, '--unit', 'lum=furlongs']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/lum/);
    expect(r.stderr).toMatch(/furlongs/);
  });

  it('exits 2 naming both columns when two could be the same quantity', () => {
    const p = csvFile('id,mass,M_Msun,lum\na,1,1,1\n');
    const r = cli(['check', p]);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/mass/);
    expect(r.stderr).toMatch(/M_Msun/);
    const ok = cli(['check', p, '--bind', 'mass=none', '--quiet']);
    expect(ok.code).toBe(0);
  });

  it('honours --fail-on', () => {
    // A 1 M_sun star at 5e4 L_sun is between the X = 0.7 and X = 0 Eddington limits: a warning.
    const p = csvFile('id,mass_Msun,lum_Lsun\na,1,50000\n');
    expect(cli(['check', p, '--quiet']).code).toBe(0);
    expect(cli(['check', p, '--quiet', '--fail-on', 'warning']).code).toBe(1);
    expect(cli(['check', p, '--quiet', '--fail-on', 'never', '--rules', 'eddington-limit']).code).toBe(0);
    expect(cli(['check', p, '--quiet', '--fail-on', 'warning', '--skip', 'eddington-limit,mass-luminosity-outlier']).code).toBe(0);
  });

  it('passes rule parameters through the shortcuts', () => {
    // With X = 1 the limit drops to 32 652 L_sun per M_sun, so 3.5e4 warns (physics-reference.md §3).
    const p = csvFile('id,mass_Msun,lum_Lsun\na,1,35000\n');
    expect(cli(['check', p, '--quiet', '--fail-on', 'warning', '--rules', 'eddington-limit']).code).toBe(0);
    expect(cli(['check', p, '--quiet', '--fail-on', 'warning', '--rules', 'eddington-limit', '--hydrogen', '1']).code).toBe(1);
  });

  it('reports rules it skipped and why', () => {
    const p = csvFile('id,teff_K\na,5772\n');
    const { report } = checkWithReport([p]);
    const edd = report.rules.find((r) => r.id === 'eddington-limit')!;
    expect(edd.perInput[0].status).toBe('skipped');
    expect(Object.keys(edd.perInput[0].skipped)[0]).toMatch(/mass, luminosity/);
  });

  it('reads CSV from stdin', () => {
    const r = cli(['check', '-', '--fail-on', 'never'], 'id,mass_Msun,lum_Lsun\na,1,3.9e26\n');
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/luminosity-unit-mixup/);
  });

  it('leaves an earlier report in place when a run fails', () => {
    const dir = tempDir();
    const report = join(dir, 'r.json');
    writeFileSync(report, '{"earlier":true}');
    const r = cli(['check', 'no/such.csv', '--report', report]);
    expect(r.code).toBe(2);
    expect(JSON.parse(readFileSync(report, 'utf8'))).toEqual({ earlier: true });
  });

  it('prints the summary as JSON on request', () => {
    const r = cli(['check', 'sample-catalogs/thistlewood-dr1.csv', '--print', 'json', '--fail-on', 'never']);
    expect(r.code).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.summary.rows).toBe(3000);
    expect(j.rules.map((x: { id: string }) => x.id)).toContain('eddington-limit');
    expect(j.summary.cost.wallSeconds).toBeGreaterThan(0);
    expect(j.summary.cost.peakRssMb).toBeGreaterThan(0);
    const f = cli(['check', 'sample-catalogs/thistlewood-dr1.csv', '--format', 'json', '--fail-on', 'never']);
    // What the run cost differs from run to run; everything else must match.
    const { cost: _a, ...same } = JSON.parse(f.stdout).summary;
    const { cost: _b, ...expected } = j.summary;
    expect(same).toEqual(expected);
  });

  it('lists the rules, as text and as JSON', () => {
    const t = cli(['rules']);
    expect(t.code).toBe(0);
    expect(t.stdout).toMatch(/eddington-limit/);
    const j = JSON.parse(cli(['rules', '--json']).stdout) as { id: string }[];
    expect(j.map((r) => r.id)).toContain('mass-luminosity-outlier');
  });

  it('explains the binding of each column', () => {
    const r = cli(['columns', 'sample-catalogs/thistlewood-dr1.csv']);
    expect(r.code).toBe(0);
    for (const c of ['mass_Msun', 'lum_Lsun', 'radius_Rsun', 'teff_K', 'logg', 'star_id']) expect(r.stdout).toContain(c);
  });
});
