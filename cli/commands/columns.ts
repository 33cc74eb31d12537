import { bindColumns } from '../binding/bind.js';
import { explainBinding } from '../binding/explain.js';
import { bindOptionsFrom } from '../options.js';
import { openCatalog } from '../readers/open.js';

export interface ColumnsFlags {
  bind: string[];
  unit: string[];
  format?: string;
  delimiter?: string;
  json?: boolean;
}

/** `starsieve columns FILE`: what each column was bound to, in which unit, and why. */
export async function columnsCommand(path: string, flags: ColumnsFlags): Promise<number> {
  const reader = await openCatalog(path, { format: flags.format, delimiter: flags.delimiter });
  try {
    const first = await reader.batches()[Symbol.asyncIterator]().next();
    const binding = bindColumns(reader.columns, first.done ? null : first.value, bindOptionsFrom(flags.bind, flags.unit));
    if (flags.json) process.stdout.write(JSON.stringify({ path, format: reader.format, columns: reader.columns, binding }, null, 2) + '\n');
    else process.stdout.write(`${path} (${reader.format}, ${reader.columns.length} columns)\n` + explainBinding(binding, reader.columns) + '\n');
    return 0;
  } finally {
    await reader.close();
  }
}
