import { readFileSync, writeFileSync } from 'node:fs';
import { ALL_RULES } from '../../rules/checks/index.js';
import { rulesMarkdown, rulesText, withRuleReference } from '../reports/rule-docs.js';
import { PROJECT_ROOT } from '../version.js';

export interface RulesFlags {
  json?: boolean;
  markdown?: boolean;
  writeReadme?: boolean;
  verbose?: boolean;
}

/** `starsieve rules`: the rule catalogue from the rules' own metadata. */
export function rulesCommand(flags: RulesFlags): number {
  if (flags.writeReadme) {
    const path = new URL('README.md', PROJECT_ROOT);
    writeFileSync(path, withRuleReference(readFileSync(path, 'utf8'), ALL_RULES));
    process.stdout.write('README.md rule reference updated\n');
    return 0;
  }
  if (flags.json) process.stdout.write(JSON.stringify(ALL_RULES.map((r) => r.meta), null, 2) + '\n');
  else if (flags.markdown) process.stdout.write(rulesMarkdown(ALL_RULES) + '\n');
  else process.stdout.write(rulesText(ALL_RULES, flags.verbose ?? false));
  return 0;
}
