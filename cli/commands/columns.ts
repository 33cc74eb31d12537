import { bindColumns } from '../binding/bind.js';
import type { Binding } from '../binding/types.js';
import { readBindingFile, withCommandLine } from '../binding/binding-file.js';
import { explainBinding } from '../binding/explain.js';
import { bindOptionsFrom, type InputFlags } from '../options.js';
import { openCatalog } from '../readers/open.js';

export interface ColumnsFlags extends InputFlags {
  json?: boolean;
}

/** Where each format keeps the metadata that `ucd` and `metadata` in the "from" column refer to. */
const METADATA_PLACES: Readonly<Record<string, { unit: string; ucd: string }>> = {
  fits: { unit: 'the TUNITn keywords', ucd: 'the TUCDn keywords' },
  votable: { unit: "the FIELD's unit attribute", ucd: "the FIELD's ucd attribute" },
  ecsv: { unit: 'the unit in the ECSV header', ucd: 'a UCD in the ECSV header' },
  parquet: { unit: 'the field metadata (Arrow schema or astropy table_meta_yaml)', ucd: 'the field metadata' },
  arrow: { unit: "the field's `unit` metadata", ucd: "the field's `ucd` metadata" },
};

function metadataSource(format: string, binding: Binding): string | null {
  const place = Object.hasOwn(METADATA_PLACES, format) ? METADATA_PLACES[format] : null;
  if (!place) return null;
  const parts: string[] = [];
  if (binding.columns.some((b) => b.quantitySource === 'ucd')) parts.push(`ucd = ${place.ucd}`);
  if (binding.columns.some((b) => b.unitSource === 'metadata')) parts.push(`metadata = ${place.unit}`);
  return parts.length === 0 ? null : `From the file's metadata: ${parts.join('; ')}.`;
}

/** `starsieve columns FILE`: what each column was bound to, in which unit, and why. */
export async function columnsCommand(path: string, flags: ColumnsFlags): Promise<number> {
  const options = withCommandLine(flags.binding ? readBindingFile(flags.binding) : null, bindOptionsFrom(flags.bind, flags.unit));
  const reader = await openCatalog(path, { format: flags.format, delimiter: flags.delimiter, hdu: flags.hdu, table: flags.table });
  try {
    const first = await reader.batches()[Symbol.asyncIterator]().next();
    const binding = bindColumns(reader.columns, first.done ? null : first.value, options);
    if (flags.json) process.stdout.write(JSON.stringify({ path, format: reader.format, columns: reader.columns, binding }, null, 2) + '\n');
    else {
      const from = metadataSource(reader.format, binding);
      process.stdout.write(`${path} (${reader.format}, ${reader.columns.length} columns)\n` + explainBinding(binding, reader.columns) + '\n' + (from ? `\n${from}\n` : ''));
    }
    return 0;
  } finally {
    await reader.close();
  }
}
