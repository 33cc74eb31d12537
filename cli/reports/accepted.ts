import { readFileSync } from 'node:fs';
import { parseDocument } from 'yaml';
import { ConfigError } from '../../rules/engine/params.js';

export const ACCEPTED_FORMAT = 'starsieve-accepted';

/** One reviewed finding that should no longer fail a run. */
export interface AcceptedEntry {
  fingerprint: string;
  rule?: string;
  input?: string;
  id?: string | null;
  row?: number | null;
  message?: string;
  reason?: string;
  acceptedBy?: string;
  acceptedAt?: string;
}

export interface AcceptedFile {
  format: typeof ACCEPTED_FORMAT;
  version: 1;
  entries: AcceptedEntry[];
}

/**
 * Where a hand-edited JSON file breaks. Node's JSON.parse does not always say, so the text is
 * parsed again as YAML (JSON is YAML), whose errors carry a line and column.
 */
function position(text: string): string {
  const err = parseDocument(text).errors[0];
  const at = err?.linePos?.[0];
  return at ? ` at line ${at.line}, column ${at.col}` : '';
}

/**
 * Reads an accepted-findings file. It is plain JSON (written by `starsieve accept`, editable by
 * hand); every problem is a ConfigError naming the file and, where JSON.parse gives one, the
 * position.
 */
export function readAccepted(path: string): AcceptedFile {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (e) {
    throw new ConfigError(`cannot read accepted findings ${path}: ${(e as Error).message}`);
  }
  let data: unknown;
  try {
    data = JSON.parse(text);
  } catch (e) {
    throw new ConfigError(`${path}: not valid JSON${position(text)}: ${(e as Error).message}`);
  }
  const d = data as Partial<AcceptedFile>;
  if (!d || typeof d !== 'object' || d.format !== ACCEPTED_FORMAT) throw new ConfigError(`${path}: not an accepted-findings file (needs "format": "${ACCEPTED_FORMAT}")`);
  if (d.version !== 1) throw new ConfigError(`${path}: unsupported version ${String(d.version)} (this starsieve reads version 1)`);
  if (!Array.isArray(d.entries)) throw new ConfigError(`${path}: "entries" must be a list`);
  d.entries.forEach((e, i) => {
    if (!e || typeof e.fingerprint !== 'string' || !/^[0-9a-f]{32}$/.test(e.fingerprint)) {
      throw new ConfigError(`${path}: entry ${i + 1} needs a "fingerprint" of 32 hex digits (copy it from a report)`);
    }
  });
  return d as AcceptedFile;
}

/** Matches findings against the accepted entries and remembers which entries matched nothing. */
export class AcceptedSet {
  private readonly byFingerprint = new Map<string, AcceptedEntry>();
  private readonly used = new Set<string>();
  accepted = 0;

  constructor(readonly file: AcceptedFile | null) {
    for (const e of file?.entries ?? []) this.byFingerprint.set(e.fingerprint, e);
  }

  /** True when the finding was reviewed and accepted. */
  match(fp: string): boolean {
    if (!this.byFingerprint.has(fp)) return false;
    this.used.add(fp);
    this.accepted++;
    return true;
  }

  /** Entries that no longer match any finding: fixed rows, or files that moved. */
  stale(): AcceptedEntry[] {
    return [...this.byFingerprint.values()].filter((e) => !this.used.has(e.fingerprint));
  }
}
