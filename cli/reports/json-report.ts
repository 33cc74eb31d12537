import type { Finding } from '../../rules/engine/types.js';
import { AtomicFile } from './atomic-file.js';

export const REPORT_FORMAT = 'starsieve-findings';
export const REPORT_SCHEMA_VERSION = 1;

export interface ReportTail {
  inputs: unknown[];
  bindings: unknown[];
  rules: unknown[];
  summary: unknown;
  /** Which part of a sharded run this report is, and the inputs of the whole run. */
  shard?: { index: number; count: number; paths: string[] };
}

/**
 * The findings report, streamed: findings are written as they arrive, the inputs, bindings and
 * summary (known only at the end) after them. Key order in JSON carries no meaning, so nothing
 * needs to be held back. Described by findings-report.schema.json.
 */
export class JsonReportWriter {
  private readonly file: AtomicFile;
  private count = 0;

  constructor(path: string, tool: { name: string; version: string }) {
    this.file = new AtomicFile(path);
    this.file.write(
      `{"format":${JSON.stringify(REPORT_FORMAT)},"schemaVersion":${REPORT_SCHEMA_VERSION},"tool":${JSON.stringify(tool)},"createdAt":${JSON.stringify(new Date().toISOString())},\n"findings":[`,
    );
  }

  /** One finding, with the identity other runs match it by and whether it was accepted. */
  push(f: Finding, fingerprint: string, accepted: boolean): void {
    this.file.write((this.count++ === 0 ? '\n' : ',\n') + JSON.stringify({ ...f, fingerprint, accepted }));
  }

  commit(tail: ReportTail): void {
    this.file.write(
      `\n],\n"inputs":${JSON.stringify(tail.inputs)},\n"bindings":${JSON.stringify(tail.bindings)},\n"rules":${JSON.stringify(tail.rules)},\n"summary":${JSON.stringify(tail.summary)}${tail.shard ? `,\n"shard":${JSON.stringify(tail.shard)}` : ''}\n}\n`,
    );
    this.file.commit();
  }

  abort(): void {
    this.file.abort();
  }
}
