/**
 * Remakes sample-catalogs/demo-report.png, the screenshot of the demo's HTML report shown in the
 * README: `npm run screenshot` (needs Debian's chromium).
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { screenshot } from '../test/helpers/browser.js';

const repo = resolve(import.meta.dirname, '..');
const html = join(mkdtempSync(join(tmpdir(), 'starsieve-shot-')), 'demo.html');
const run = spawnSync(process.execPath, [join(repo, 'bin/starsieve.js'), 'check', 'sample-catalogs/thistlewood-dr1.csv', '--html', html, '--quiet', '--fail-on', 'never'], { cwd: repo, stdio: 'inherit' });
if (run.status !== 0) process.exit(run.status ?? 2);
const r = screenshot(html, join(repo, 'sample-catalogs/demo-report.png'), 1200, 1250);
if (!r.ok) {
  process.stderr.write(r.stderr);
  process.exit(2);
}
process.stdout.write('sample-catalogs/demo-report.png written\n');
