import { mkdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { CHROMIUM, SKIP_BROWSER, screenshot } from '../helpers/browser.js';
import { REPO, cli, tempDir } from '../helpers/cli.js';

describe.skipIf(!CHROMIUM)('HTML report in a real browser', () => {
  if (!CHROMIUM) it.skip(SKIP_BROWSER, () => {});

  it('renders the demo report offline with no console errors, and saves a screenshot', () => {
    const dir = tempDir();
    const html = join(dir, 'demo.html');
    expect(cli(['check', 'sample-catalogs/thistlewood-dr1.csv', '--html', html, '--quiet', '--fail-on', 'never']).code).toBe(0);
    const out = join(REPO, 'test-output');
    mkdirSync(out, { recursive: true });
    const png = join(out, 'demo-report.png');
    const r = screenshot(html, png);
    expect(r.ok, r.stderr.slice(-2000)).toBe(true);
    expect(r.consoleErrors).toEqual([]);
    // A PNG, and not a blank one: the page with two diagrams compresses to well over 50 kB.
    const bytes = readFileSync(png);
    expect(bytes.subarray(1, 4).toString()).toBe('PNG');
    expect(bytes.length).toBeGreaterThan(50_000);
  });
});
