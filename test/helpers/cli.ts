import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { expect } from 'vitest';
import type { Finding } from '../../rules/engine/types.js';

export const REPO = resolve(import.meta.dirname, '../..');
export const SHARED = resolve(REPO, '../shared');
export const REFERENCE = join(SHARED, 'reference-data');
export const hasShared = existsSync(REFERENCE);
export const SKIP_SHARED = 'skipped: ../shared/reference-data is absent (a fresh clone without the shared folder)';

export interface CliResult {
  code: number;
  stdout: string;
  stderr: string;
}

/** Runs the CLI as a user would, through the bin entry. */
export function cli(args: string[], input?: string): CliResult {
  const r = spawnSync(process.execPath, [join(REPO, 'bin/starsieve.js'), ...args], {
    cwd: REPO,
    encoding: 'utf8',
    input,
    env: { ...process.env, NO_COLOR: '1' },
    maxBuffer: 1 << 28,
  });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr };
}

export function tempDir(): string {
  return mkdtempSync(join(tmpdir(), 'starsieve-test-'));
}

/** Runs `check` with a report into a temp dir and returns the parsed report too. */
export function checkWithReport(args: string[]): CliResult & { report: Report } {
  const path = join(tempDir(), 'report.json');
  const r = cli(['check', ...args, '--report', path, '--quiet']);
  if (!existsSync(path)) throw new Error(`no report written (exit ${r.code}): ${r.stderr}`);
  return { ...r, report: JSON.parse(readFileSync(path, 'utf8')) as Report };
}

export interface Report {
  format: string;
  findings: Finding[];
  inputs: { path: string; format: string; records: number; rows: number; unparseableRecords: number; rowsWithFindings: number; notes: string[] }[];
  bindings: { columns: { quantity: string; column: string; unit: string }[]; notes: string[] }[];
  rules: { id: string; perInput: { status: string; checked: number; skipped: Record<string, number>; details: Record<string, unknown> }[] }[];
  summary: { findings: Record<string, number>; failed: boolean; rows: number };
}

/** A report without what describes the run rather than the catalog (the time and the cost), to compare runs. */
export function comparableReport(path: string): unknown {
  const doc = JSON.parse(readFileSync(path, 'utf8')) as Record<string, unknown> & { summary: Record<string, unknown> };
  delete doc.createdAt;
  delete doc.summary.cost;
  return doc;
}

/**
 * `check` run as shards 1..n of n, each writing `<prefix>-<k>.json` and printing nothing on stderr.
 * Returns the report paths in shard order.
 */
export function checkInShards(args: string[], n: number, prefix: string): string[] {
  const parts: string[] = [];
  for (let k = 1; k <= n; k++) {
    const p = `${prefix}-${k}.json`;
    expect(cli(['check', ...args, '--shard', `${k}/${n}`, '--report', p, '--quiet']).stderr, `shard ${k}/${n}`).toBe('');
    parts.push(p);
  }
  return parts;
}
