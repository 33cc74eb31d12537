import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { ALL_RULES } from '../../rules/checks/index.js';
import { withRuleReference } from '../../cli/reports/rule-docs.js';

const readme = readFileSync(new URL('../../README.md', import.meta.url), 'utf8');

describe('README', () => {
  it('holds the rule reference generated from the rules themselves (run `npm run readme` when this fails)', () => {
    expect(readme).toBe(withRuleReference(readme, ALL_RULES));
  });

  it('opens with the job paragraph and exactly the two quick-start commands', () => {
    const quick = readme.split('## Quick start')[1].split('##')[0];
    const block = quick.split('```')[1].trim().split('\n');
    expect(block).toEqual(['npm ci && npm run demo', 'npm test']);
  });

  it('documents every rule id, parameter and exit code', () => {
    for (const r of ALL_RULES) {
      expect(readme).toContain(`### ${r.meta.id}`);
      for (const p of r.meta.params) expect(readme).toContain(`${r.meta.id}.${p.name}`);
    }
    for (const code of ['| 0 |', '| 1 |', '| 2 |']) expect(readme).toContain(code);
  });
});

describe('rule metadata', () => {
  it('has unique ids, complete documentation and at least one reference per rule', () => {
    const ids = ALL_RULES.map((r) => r.meta.id);
    expect(new Set(ids).size).toBe(ids.length);
    for (const { meta } of ALL_RULES) {
      expect(meta.id).toMatch(/^[a-z]+(-[a-z]+)*$/);
      for (const k of ['catches', 'why', 'fires', 'silent', 'cautions'] as const) expect(meta.doc[k].length).toBeGreaterThan(20);
      expect(meta.references.length).toBeGreaterThan(0);
      for (const p of meta.params) expect(p.description.length).toBeGreaterThan(10);
    }
  });
});
