import { createHash } from 'node:crypto';
import { relative, sep } from 'node:path';
import type { Finding } from '../../rules/engine/types.js';

/**
 * How an input is named in fingerprints, SARIF and accepted-findings files: relative to the
 * working directory with forward slashes, so the same file gets the same name on every machine
 * that checks out the same repository.
 */
export function inputName(path: string, cwd = process.cwd()): string {
  if (path === '-') return '-';
  const rel = relative(cwd, path);
  return (rel === '' ? path : rel).split(sep).join('/');
}

/**
 * A finding's identity across runs and releases: its rule, its input, the star's id where there
 * is one (else the values of the columns it involves), and those columns. The row number is left
 * out on purpose, so inserting a row above does not make every later finding look new.
 */
export function fingerprint(f: Finding, input: string): string {
  const h = createHash('sha256');
  h.update(`starsieve/1\0${f.rule}\0${input}\0${f.scope}\0${f.columns.join('\u0001')}\0`);
  if (f.id !== null) h.update(`id\0${f.id}`);
  else h.update(`values\0${f.columns.map((c) => String(f.values[c] ?? '')).join('\u0001')}`);
  return h.digest('hex').slice(0, 32);
}
