import { pathToFileURL } from 'node:url';
import type { Finding, FindingSink, Rule, Severity } from '../../rules/engine/types.js';
import { AtomicFile } from './atomic-file.js';
import { fingerprint, inputName } from './fingerprint.js';

export const SARIF_SCHEMA_URI = 'https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json';
const LEVEL: Record<Severity, 'error' | 'warning' | 'note'> = { error: 'error', warning: 'warning', note: 'note' };

/** A relative path as a SARIF URI reference: forward slashes, each segment percent-encoded. */
export function uriReference(name: string): string {
  return name
    .split('/')
    .map((seg) => (seg === '..' || seg === '.' ? seg : encodeURIComponent(seg)))
    .join('/');
}

function ruleDescriptor(rule: Rule) {
  const m = rule.meta;
  return {
    id: m.id,
    name: m.id.replace(/(^|-)([a-z])/g, (_, __, c: string) => c.toUpperCase()),
    shortDescription: { text: m.title },
    fullDescription: { text: m.doc.catches },
    help: {
      text: `${m.doc.catches}\n\nWhy: ${m.doc.why}\n\nCautions: ${m.doc.cautions}\n\nReferences: ${m.references.map((r) => r.cite).join('; ')}`,
    },
    defaultConfiguration: { level: LEVEL[m.severity] },
    properties: { tags: ['stellar-catalog', m.stage] },
  };
}

/**
 * SARIF 2.1.0 for code-scanning annotations, streamed like the JSON report: one result per
 * finding, located at the input's line where the format has lines, with a fingerprint that does
 * not depend on the row number.
 */
export class SarifWriter implements FindingSink {
  private readonly file: AtomicFile;
  private readonly ruleIndex = new Map<string, number>();
  private readonly names: string[];
  private count = 0;

  constructor(path: string, tool: { name: string; version: string }, rules: readonly Rule[], inputs: readonly string[]) {
    this.file = new AtomicFile(path);
    this.names = inputs.map((p) => inputName(p));
    rules.forEach((r, i) => this.ruleIndex.set(r.meta.id, i));
    const driver = {
      name: tool.name,
      version: tool.version,
      informationUri: 'https://www.npmjs.com/package/starsieve',
      rules: rules.map(ruleDescriptor),
    };
    const head = {
      version: '2.1.0',
      $schema: SARIF_SCHEMA_URI,
      runs: [
        {
          tool: { driver },
          originalUriBaseIds: { SRCROOT: { uri: pathToFileURL(process.cwd() + '/').href } },
          columnKind: 'unicodeCodePoints',
          results: [],
        },
      ],
    };
    // Everything up to the open results array; results are streamed, then the document closed.
    const text = JSON.stringify(head);
    this.file.write(text.slice(0, text.lastIndexOf('[]')) + '[');
  }

  push(f: Finding): void {
    const name = this.names[f.input] ?? String(f.input);
    const physical: Record<string, unknown> = { artifactLocation: { uri: uriReference(name), uriBaseId: 'SRCROOT' } };
    if (f.line !== null) physical.region = { startLine: f.line };
    const result = {
      ruleId: f.rule,
      ruleIndex: this.ruleIndex.get(f.rule),
      level: LEVEL[f.severity],
      message: { text: f.suggestion ? `${f.message}. Suggestion: ${f.suggestion.text}` : f.message },
      locations: [
        {
          physicalLocation: physical,
          logicalLocations: [{ name: f.scope === 'row' ? `row ${f.row}${f.id ? ` (${f.id})` : ''}` : `column ${f.columns.join(', ')}`, kind: 'element' }],
        },
      ],
      partialFingerprints: { 'starsieveFinding/v1': fingerprint(f, name) },
      properties: { row: f.row, line: f.line, starId: f.id, columns: f.columns, values: f.values, expected: f.expected, cause: f.cause },
    };
    this.file.write((this.count++ === 0 ? '\n' : ',\n') + JSON.stringify(result));
  }

  commit(): void {
    this.file.write('\n]}]}\n');
    this.file.commit();
  }

  abort(): void {
    this.file.abort();
  }
}
