import { readFileSync } from 'node:fs';
import { ConfigError } from '../../rules/engine/params.js';
import type { Finding } from '../../rules/engine/types.js';
import { REPORT_FORMAT } from '../reports/json-report.js';

export interface StoredFinding extends Finding {
  fingerprint: string;
  accepted?: boolean;
}

export interface StoredReport {
  format: string;
  findings: StoredFinding[];
  inputs: { path: string }[];
}

/** Reads a findings report written by `starsieve check --report`, with a clear error otherwise. */
export function readReport(path: string): StoredReport {
  let data: StoredReport;
  try {
    data = JSON.parse(readFileSync(path, 'utf8')) as StoredReport;
  } catch (e) {
    throw new ConfigError(`cannot read report ${path}: ${(e as Error).message}`);
  }
  if (data?.format !== REPORT_FORMAT || !Array.isArray(data.findings)) throw new ConfigError(`${path} is not a starsieve findings report`);
  return data;
}
