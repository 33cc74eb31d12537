/**
 * The CLI run asynchronously, several at a time and each under a time limit, so the corpus can
 * be checked through the real entry point without paying for every start-up in turn.
 */
import { spawn } from 'node:child_process';
import { join } from 'node:path';
import { REPO } from '../helpers/cli.js';

export interface TimedResult {
  code: number | null;
  signal: NodeJS.Signals | null;
  stdout: string;
  stderr: string;
  ms: number;
  timedOut: boolean;
}

/** Runs `starsieve args...`; a run past `timeoutMs` is killed and marked timedOut (a hang). */
export function runCli(args: readonly string[], timeoutMs: number, env: Record<string, string> = {}): Promise<TimedResult> {
  return new Promise((done) => {
    const started = Date.now();
    const child = spawn(process.execPath, [join(REPO, 'bin/starsieve.js'), ...args], {
      cwd: REPO,
      env: { ...process.env, NO_COLOR: '1', ...env },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let stdout = '';
    let stderr = '';
    child.stdout.setEncoding('utf8').on('data', (s: string) => (stdout += s));
    child.stderr.setEncoding('utf8').on('data', (s: string) => (stderr += s));
    let timedOut = false;
    const timer = setTimeout(() => {
      timedOut = true;
      child.kill('SIGKILL');
    }, timeoutMs);
    child.on('close', (code, signal) => {
      clearTimeout(timer);
      done({ code, signal, stdout, stderr, ms: Date.now() - started, timedOut });
    });
  });
}

/** Maps over `items` with at most `limit` runs at once (the machine has two cores). */
export async function pool<T, R>(items: readonly T[], limit: number, run: (item: T) => Promise<R>): Promise<R[]> {
  const out: R[] = new Array(items.length);
  let next = 0;
  const worker = async () => {
    while (next < items.length) {
      const i = next++;
      out[i] = await run(items[i]);
    }
  };
  await Promise.all(Array.from({ length: Math.min(limit, items.length) }, worker));
  return out;
}

/** A Node stack frame (`    at fn (file:1:2)`): never shown to a user. */
export const STACK_FRAME = /^\s+at .+(:\d+:\d+\)?|\(native\)|<anonymous>\)?)$/m;
