import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { REPO, cli, tempDir } from '../helpers/cli.js';

// Golden files of the demo's JSON report and SARIF log. They change whenever a rule, a message
// or the demo changes; remake them with `UPDATE_GOLDEN=1 npx vitest run test/e2e/golden.test.ts`
// and review the diff like any other change.
const GOLDEN = join(REPO, 'test/fixtures/golden');
const update = process.env.UPDATE_GOLDEN === '1';

/** Drops what differs from run to run and machine to machine: the time, what the run cost, absolute paths. */
function normalise(doc: Record<string, unknown>): unknown {
  return JSON.parse(
    JSON.stringify(doc, (k, v) => {
      if (k === 'createdAt') return '<time>';
      if (k === 'cost') return '<cost>';
      if (k === 'SRCROOT') return { uri: '<repository>' };
      return v;
    }),
  );
}

function compare(name: string, actual: unknown) {
  const file = join(GOLDEN, name);
  if (update || !existsSync(file)) {
    mkdirSync(GOLDEN, { recursive: true });
    writeFileSync(file, JSON.stringify(actual, null, 1) + '\n');
  }
  expect(actual).toEqual(JSON.parse(readFileSync(file, 'utf8')));
}

describe('golden reports of the demo catalog', () => {
  const dir = tempDir();
  const report = join(dir, 'r.json');
  const sarif = join(dir, 'r.sarif');
  const r = cli(['check', 'sample-catalogs/thistlewood-dr1.csv', '--report', report, '--sarif', sarif, '--quiet', '--fail-on', 'never']);

  it('JSON report', () => {
    expect(r.code, r.stderr).toBe(0);
    compare('demo.report.json', normalise(JSON.parse(readFileSync(report, 'utf8'))));
  });

  it('SARIF log', () => {
    compare('demo.sarif.json', normalise(JSON.parse(readFileSync(sarif, 'utf8'))));
  });
});
