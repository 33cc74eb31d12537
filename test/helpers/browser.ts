import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';

/** Debian's Chromium, where installed (.ci/run installs it with apt-get). */
export const CHROMIUM = ['/usr/bin/chromium', '/usr/bin/chromium-browser'].find((p) => existsSync(p)) ?? null;
export const SKIP_BROWSER = 'skipped: no Chromium on this machine (apt-get install chromium)';

export interface Render {
  ok: boolean;
  /** Console messages and load failures Chromium logged for the page. */
  consoleErrors: string[];
  stderr: string;
}

/**
 * Renders a local page headless and screenshots it. The flags keep Chromium off the network
 * (this machine has none) and away from any profile; console output is read from its log.
 */
export function screenshot(htmlPath: string, pngPath: string, width = 1200, height = 1500): Render {
  if (!CHROMIUM) throw new Error(SKIP_BROWSER);
  const profile = mkdtempSync(join(tmpdir(), 'starsieve-chromium-'));
  try {
    const r = spawnSync(
      CHROMIUM,
      [
        '--headless',
        '--no-sandbox',
        '--disable-gpu',
        '--disable-quic',
        '--no-first-run',
        '--disable-background-networking',
        '--disable-component-update',
        '--disable-sync',
        '--hide-scrollbars',
        '--enable-logging=stderr',
        '--v=0',
        `--user-data-dir=${profile}`,
        `--window-size=${width},${height}`,
        `--screenshot=${pngPath}`,
        pathToFileURL(htmlPath).href,
      ],
      { encoding: 'utf8', timeout: 60_000 },
    );
    const stderr = r.stderr ?? '';
    const consoleErrors = stderr.split('\n').filter((l) => /CONSOLE|Refused to|Failed to load resource|Uncaught/.test(l));
    return { ok: r.status === 0 && existsSync(pngPath), consoleErrors, stderr };
  } finally {
    rmSync(profile, { recursive: true, force: true });
  }
}
