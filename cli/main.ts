import { Command, CommanderError, InvalidArgumentError, Option } from 'commander';
import { ConfigError } from '../rules/engine/params.js';
import { BindingError } from './binding/types.js';
import { acceptCommand } from './commands/accept.js';
import { checkCommand } from './commands/check.js';
import { compareCommand } from './commands/compare.js';
import { columnsCommand } from './commands/columns.js';
import { rulesCommand } from './commands/rules.js';
import { FAIL_LEVELS } from './options.js';
import { mergeCommand } from './commands/merge.js';
import { FORMAT_NAMES } from './readers/open.js';
import { InputError } from './readers/types.js';
import { TOOL } from './version.js';

const collect = (v: string, prev: string[]) => [...prev, v];

/** Exit codes: 0 nothing at or above the fail level, 1 findings at or above it, 2 usage, configuration or input errors. */
export async function main(argv: string[]): Promise<number> {
  let code = 0;
  const program = new Command('starsieve')
    .description('Lint stellar catalogs: physically possible, self-consistent, in the units the header claims.')
    .version(TOOL.version)
    .exitOverride()
    .configureOutput({ writeErr: (s) => process.stderr.write(s) });

  const formatOption = () => new Option('--format <format>', 'input format instead of detecting it').choices(FORMAT_NAMES as string[]);
  const wholeNumber = (v: string) => {
    if (!/^\d+$/.test(v.trim())) throw new InvalidArgumentError('it must be a whole number.');
    return Number(v);
  };
  const hduOption = () => new Option('--hdu <n>', 'FITS: read this HDU (0 = primary; default: the first binary table)').argParser(wholeNumber);
  const tableOption = () => new Option('--table <n>', 'VOTable: read the n-th TABLE (1 = the first, the default)').argParser(wholeNumber);
  const bindingOption = () => new Option('--binding <file>', 'binding file: which column is which quantity, unit and error (YAML or JSON; see README)');

  program
    .command('check')
    .description('check catalogs and report findings')
    .argument('<files...>', 'catalog files (CSV, TSV, ECSV, FITS, VOTable, Parquet, Arrow IPC; text formats and FITS also .gz); - for CSV on stdin')
    .option('--report <path>', 'write the JSON findings report here (atomically)')
    .option('--sarif <path>', 'write SARIF 2.1.0 for code-scanning annotations')
    .option('--html <path>', 'write a self-contained HTML report with diagrams')
    .option('--html-rows <n>', 'findings listed per rule in the HTML report', '50')
    .option('--accepted <path>', 'findings reviewed and accepted earlier: counted, but they do not fail the run')
    .addOption(new Option('--fail-on <level>', 'exit 1 when a finding is at or above this severity').choices(FAIL_LEVELS as string[]).default('error'))
    .option('--rules <ids>', 'run only these rules (comma-separated)')
    .option('--skip <ids>', 'do not run these rules (comma-separated)')
    .option('--param <rule.name=value>', 'set a rule parameter (repeatable)', collect, [])
    .option('--sigma <n>', 'mass-luminosity-outlier threshold in sigma (default 3), or auto: chance exceedances below 0.5 for the stars judged')
    .option('--relation <name>', 'mass-luminosity relation: default, eker2018, classic, tout1996, or catalog (the catalog\'s own fit, two passes)')
    .option('--hydrogen <X>', 'hydrogen mass fraction for eddington-limit (default 0.7)')
    .option('--bind <column=quantity>', 'bind a column to a quantity, e.g. lum=luminosity, e_lum=luminosity.err, flag=none (repeatable)', collect, [])
    .option('--unit <column=unit>', 'read a column in this unit, e.g. lum=W (repeatable)', collect, [])
    .addOption(bindingOption())
    .addOption(
      new Option('--format <format>', 'input format instead of detecting it; `json` instead prints the summary as JSON (same as --print json)').choices([
        ...(FORMAT_NAMES as string[]),
        'json',
      ]),
    )
    .addOption(hduOption())
    .addOption(tableOption())
    .option('--delimiter <char>', 'CSV delimiter instead of detecting it')
    .option('--batch-size <rows>', 'rows per batch')
    .option('--jobs <n>', 'threads to check with (default: one per core; inputs under 8 MB in all use one)')
    .option('--shard <K/N>', 'check only part K of N: every N-th input from the K-th, or, for a single CSV file, the K-th of N byte ranges of it; combine the reports with `starsieve merge`')
    .option('--show <n>', 'findings shown per rule in the terminal', '3')
    .option('--no-color', 'no colour even on a terminal')
    .option('--quiet', 'print nothing but errors')
    .addOption(new Option('--print <form>', 'form of the summary on stdout').choices(['text', 'json']).default('text'))
    .action(async (files: string[], o) => {
      // `json` names no input format, so `--format json` can keep the meaning users expect of it.
      if (o.format === 'json') {
        o.print = 'json';
        o.format = undefined;
      }
      code = await checkCommand(files, { ...o, color: o.color !== false && process.stdout.isTTY === true && !process.env.NO_COLOR });
    });

  program
    .command('columns')
    .description('show how the columns of a catalog are bound to quantities and units, and why')
    .argument('<file>', 'catalog file')
    .option('--bind <column=quantity>', 'bind a column to a quantity (repeatable)', collect, [])
    .option('--unit <column=unit>', 'read a column in this unit (repeatable)', collect, [])
    .addOption(bindingOption())
    .addOption(formatOption())
    .addOption(hduOption())
    .addOption(tableOption())
    .option('--delimiter <char>', 'CSV delimiter instead of detecting it')
    .option('--json', 'machine-readable output')
    .action(async (file: string, o) => {
      code = await columnsCommand(file, o);
    });

  program
    .command('accept')
    .description('record the findings of a report as reviewed and accepted')
    .argument('<report>', 'a JSON report written by check --report')
    .option('--out <path>', 'accepted-findings file to add to', 'starsieve-accepted.json')
    .option('--reason <text>', 'why these findings are accepted')
    .option('--by <name>', 'who accepted them (default: $USER)')
    .option('--rules <ids>', 'only findings of these rules (comma-separated)')
    .action((report: string, o) => {
      code = acceptCommand(report, o);
    });

  program
    .command('merge')
    .description('combine the reports of a sharded run (check --shard K/N) into the report of the whole run')
    .argument('<reports...>', 'the shard reports, one per shard, in any order')
    .requiredOption('--report <path>', 'write the merged JSON report here (atomically)')
    .option('--sarif <path>', 'also write SARIF 2.1.0 for the whole run')
    .option('--accepted <file>', 'the accepted-findings file the shards used, for the whole-file findings a merge of one file\'s byte ranges makes')
    .addOption(new Option('--fail-on <level>', 'exit 1 when a finding is at or above this severity (default: what the shards used)').choices(FAIL_LEVELS as string[]))
    .option('--show <n>', 'findings shown per rule in the terminal', '3')
    .option('--no-color', 'no colour even on a terminal')
    .option('--quiet', 'print nothing but errors')
    .action(async (reports: string[], o) => {
      code = await mergeCommand(reports, { ...o, color: o.color && process.stdout.isTTY === true && !process.env.NO_COLOR });
    });

  program
    .command('compare')
    .description('findings new, fixed and unchanged between two reports (e.g. two releases)')
    .argument('<old>', 'the earlier JSON report')
    .argument('<new>', 'the later JSON report')
    .addOption(new Option('--fail-on <level>', 'exit 1 when a new finding is at or above this severity').choices(FAIL_LEVELS as string[]).default('error'))
    .option('--json', 'machine-readable output')
    .option('--show <n>', 'new findings listed', '10')
    .action((oldReport: string, newReport: string, o) => {
      code = compareCommand(oldReport, newReport, o);
    });

  program
    .command('rules')
    .description('list the rules with their documentation')
    .option('--json', 'the rules\' metadata as JSON')
    .option('--markdown', 'the rule reference as Markdown')
    .option('--verbose', 'full documentation of each rule')
    .addOption(new Option('--write-readme').hideHelp())
    .action((o) => {
      code = rulesCommand(o);
    });

  try {
    await program.parseAsync(argv, { from: 'user' });
    return code;
  } catch (e) {
    if (e instanceof CommanderError) return e.exitCode === 0 ? 0 : 2;
    if (e instanceof InputError) {
      // Reader messages mostly start with the input's name already; say it once, and the position once.
      const named = e.message.startsWith(e.path) || e.message.startsWith('standard input');
      const at = e.position && !e.message.includes(e.position) ? e.position : null;
      process.stderr.write(
        named ? `starsieve: ${e.message}${at ? ` (at ${at})` : ''}\n` : `starsieve: ${e.path}${e.position ? `:${e.position}` : ''}: ${e.message}\n`,
      );
      return 2;
    }
    if (e instanceof BindingError || e instanceof ConfigError) {
      process.stderr.write(`starsieve: ${e.message}\n`);
      return 2;
    }
    const err = e as NodeJS.ErrnoException;
    if (err && typeof err.code === 'string' && /^E[A-Z]+$/.test(err.code)) {
      process.stderr.write(`starsieve: ${err.message}\n`);
      return 2;
    }
    process.stderr.write(`starsieve: internal error: ${err?.message ?? String(e)} (please report this with the input that caused it)\n`);
    if (process.env.STARSIEVE_DEBUG) process.stderr.write(`${err?.stack ?? ''}\n`);
    return 2;
  }
}

const isEntry = process.argv[1] && import.meta.url === new URL(`file://${process.argv[1]}`).href;
if (isEntry) {
  main(process.argv.slice(2)).then((code) => {
    process.exitCode = code;
  });
}
