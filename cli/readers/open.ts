/**
 * Picks the reader for an input: an explicit format wins, then the file's first bytes, then its
 * extension. New formats (FITS, VOTable, Parquet, ECSV) are one more entry in FORMATS.
 */
import { open as openFile } from 'node:fs/promises';
import { extname } from 'node:path';
import { openArrow } from './arrow.js';
import { describeIoError, displayName } from './common.js';
import { openCsv } from './csv.js';
import { InputError, type CatalogReader, type ReaderOptions } from './types.js';

export interface FormatEntry {
  /** The name `--format` takes and reports show. */
  format: string;
  /** Other names accepted for `--format`. */
  aliases: readonly string[];
  /** Lower-case, with the dot. */
  extensions: readonly string[];
  /** True when the first bytes prove the format; absent for formats without a signature. */
  sniff?: (head: Uint8Array) => boolean;
  open: (path: string, options: ReaderOptions) => Promise<CatalogReader>;
}

/** Bytes read for sniffing; enough for every signature in the table (FITS will want 80). */
const SNIFF_BYTES = 80;

function startsWith(head: Uint8Array, bytes: readonly number[]): boolean {
  if (head.length < bytes.length) return false;
  for (let i = 0; i < bytes.length; i++) if (head[i] !== bytes[i]) return false;
  return true;
}

const ARROW_FILE_MAGIC = [0x41, 0x52, 0x52, 0x4f, 0x57, 0x31]; // "ARROW1"
const ARROW_CONTINUATION = [0xff, 0xff, 0xff, 0xff];
const GZIP_MAGIC = [0x1f, 0x8b];

export const FORMATS: readonly FormatEntry[] = [
  {
    format: 'arrow',
    aliases: ['arrows', 'feather', 'ipc'],
    extensions: ['.arrow', '.arrows', '.feather', '.ipc'],
    sniff: (head) => startsWith(head, ARROW_FILE_MAGIC) || startsWith(head, ARROW_CONTINUATION),
    open: openArrow,
  },
  {
    format: 'csv',
    aliases: [],
    extensions: ['.csv', '.txt'],
    open: openCsv,
  },
  {
    // A .tsv may hold commas inside names; detection could then pick the wrong delimiter.
    format: 'tsv',
    aliases: ['tab'],
    extensions: ['.tsv', '.tab'],
    open: (path, options) => openCsv(path, { ...options, delimiter: options.delimiter ?? '\t' }),
  },
];

function knownFormats(): string {
  return FORMATS.map((f) => f.format).join(', ');
}

export function findFormat(name: string): FormatEntry | undefined {
  const wanted = name.trim().toLowerCase();
  return FORMATS.find((f) => f.format === wanted || f.aliases.includes(wanted));
}

export async function openCatalog(
  path: string,
  options: ReaderOptions & { format?: string } = {},
): Promise<CatalogReader> {
  const { format, ...readerOptions } = options;
  if (format !== undefined && format !== '') {
    const entry = findFormat(format);
    if (!entry) {
      throw new InputError(`unknown format '${format}' for ${displayName(path)} (known: ${knownFormats()})`, path);
    }
    if (path !== '-') await sniffHead(path); // a missing file reads the same for every format
    return entry.open(path, readerOptions);
  }
  if (path === '-') return openCsv(path, readerOptions);

  const head = await sniffHead(path);
  for (const entry of FORMATS) {
    if (entry.sniff?.(head)) return entry.open(path, readerOptions);
  }
  if (startsWith(head, GZIP_MAGIC)) {
    throw new InputError(
      `${path} is gzip-compressed; decompress it first (for example: gunzip -c ${path} | starsieve check -)`,
      path,
    );
  }
  const ext = extname(path).toLowerCase();
  for (const entry of FORMATS) {
    if (entry.extensions.includes(ext)) return entry.open(path, readerOptions);
  }
  throw new InputError(
    `cannot tell the format of ${path} from its contents or its extension ${ext === '' ? '(none)' : `'${ext}'`}; ` +
      `name one with --format (${knownFormats()})`,
    path,
  );
}

/** The first bytes of the file, and the place where a missing or unreadable file is reported. */
async function sniffHead(path: string): Promise<Uint8Array> {
  let handle;
  try {
    handle = await openFile(path, 'r');
    const buf = Buffer.alloc(SNIFF_BYTES);
    const { bytesRead } = await handle.read(buf, 0, SNIFF_BYTES, 0);
    return buf.subarray(0, bytesRead);
  } catch (err) {
    throw new InputError(`cannot read ${path}: ${describeIoError(err)}`, path);
  } finally {
    await handle?.close().catch(() => undefined);
  }
}
