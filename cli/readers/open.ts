/**
 * Picks the reader for an input: an explicit format wins, then the file's first bytes, then its
 * extension. A gzip file is looked into: its decompressed first bytes (or the extension under
 * `.gz`) choose the format, and streaming readers read it through a decompressing stream.
 */
import { extname } from 'node:path';
import { openArrow } from './arrow.js';
import { displayName } from './common.js';
import { openCsv } from './csv.js';
import { ECSV_SIGNATURE, openEcsv } from './ecsv.js';
import { openFits } from './fits.js';
import { PARQUET_MAGIC, openParquet } from './parquet.js';
import { openSource, type InputSource } from './source.js';
import { InputError, type CatalogReader, type ReaderOptions } from './types.js';
import { looksLikeVotable, openVotable } from './votable.js';

export interface OpenOptions extends ReaderOptions {
  /** A format name or alias from FORMATS; detected when absent. */
  format?: string;
  /** FITS: the HDU to read (0 = primary); by default the first binary table. */
  hdu?: number;
  /** VOTable: the TABLE to read, 1 = the first in the document (the default). */
  table?: number;
  /** gzip: most decompressed bytes accepted (default: see inflateLimit in gzip.ts). */
  maxInflatedBytes?: number;
  /** Bytes per read from disk; tests make it tiny to put chunk boundaries everywhere. */
  readChunkBytes?: number;
}

export interface FormatEntry {
  /** The name `--format` takes and reports show. */
  format: string;
  /** Other names accepted for `--format`. */
  aliases: readonly string[];
  /** Lower-case, with the dot; `.gz` after any of them is understood. */
  extensions: readonly string[];
  /** True when the first bytes prove the format; absent for formats without a signature. */
  sniff?: (head: Uint8Array) => boolean;
  /** False for formats that need random access and so cannot be read through gunzip. */
  streams: boolean;
  open: (src: InputSource, options: OpenOptions) => Promise<CatalogReader>;
}

function startsWith(head: Uint8Array, bytes: readonly number[]): boolean {
  if (head.length < bytes.length) return false;
  for (let i = 0; i < bytes.length; i++) if (head[i] !== bytes[i]) return false;
  return true;
}

const ascii = (s: string) => [...s].map((c) => c.charCodeAt(0));
const ARROW_FILE_MAGIC = ascii('ARROW1');
const ARROW_CONTINUATION = [0xff, 0xff, 0xff, 0xff];
const FITS_SIGNATURE = ascii('SIMPLE  =');

/** The text reader for CSV-like tables, fed by the source where it must decode (gzip, UTF-16, Latin-1). */
const csvFrom = (src: InputSource, options: OpenOptions, delimiter?: string) =>
  openCsv(src.path, { ...options, delimiter: options.delimiter ?? delimiter, textStream: src.needsDecoding ? src.text(options.readChunkBytes) : undefined });

/** Formats that are text, and so are read in the encoding the first bytes show. */
const TEXT_FORMATS = new Set(['csv', 'tsv', 'ecsv', 'votable']);

export const FORMATS: readonly FormatEntry[] = [
  {
    format: 'fits',
    aliases: ['fit', 'fts', 'bintable'],
    extensions: ['.fits', '.fit', '.fts'],
    sniff: (head) => startsWith(head, FITS_SIGNATURE),
    streams: true,
    open: (src, o) => openFits(src, o),
  },
  {
    format: 'votable',
    aliases: ['vot', 'xml'],
    extensions: ['.vot', '.votable', '.xml'],
    sniff: looksLikeVotable,
    streams: true,
    open: (src, o) => openVotable(src, o),
  },
  {
    format: 'parquet',
    aliases: ['pq'],
    extensions: ['.parquet', '.pq'],
    sniff: (head) => startsWith(head, PARQUET_MAGIC),
    streams: false,
    open: (src, o) => openParquet(src, o),
  },
  {
    format: 'arrow',
    aliases: ['arrows', 'feather', 'ipc'],
    extensions: ['.arrow', '.arrows', '.feather', '.ipc'],
    sniff: (head) => startsWith(head, ARROW_FILE_MAGIC) || startsWith(head, ARROW_CONTINUATION),
    streams: false,
    open: (src, o) => openArrow(src.path, o),
  },
  {
    // Before csv: an ECSV file is also a valid CSV, but only its header says the units.
    format: 'ecsv',
    aliases: [],
    extensions: ['.ecsv'],
    sniff: (head) => startsWith(head, ECSV_SIGNATURE),
    streams: true,
    open: (src, o) => openEcsv(src, o),
  },
  {
    format: 'csv',
    aliases: [],
    extensions: ['.csv', '.txt'],
    streams: true,
    open: (src, o) => csvFrom(src, o),
  },
  {
    // A .tsv may hold commas inside names; detection could then pick the wrong delimiter.
    format: 'tsv',
    aliases: ['tab'],
    extensions: ['.tsv', '.tab'],
    streams: true,
    open: (src, o) => csvFrom(src, o, '\t'),
  },
];

/** Names `--format` accepts, for the CLI's choices. */
export const FORMAT_NAMES: readonly string[] = FORMATS.map((f) => f.format);

function knownFormats(): string {
  return FORMAT_NAMES.join(', ');
}

export function findFormat(name: string): FormatEntry | undefined {
  const wanted = name.trim().toLowerCase();
  return FORMATS.find((f) => f.format === wanted || f.aliases.includes(wanted));
}

/** The extension that names the format: `.csv` for `cat.csv.gz`. */
function formatExtension(path: string, gzip: boolean): string {
  const ext = extname(path).toLowerCase();
  if (ext === '.gz' || ext === '.gzip' || (gzip && ext === '.tgz')) return extname(path.slice(0, -ext.length)).toLowerCase();
  return ext;
}

export async function openCatalog(path: string, options: OpenOptions = {}): Promise<CatalogReader> {
  const { format, ...readerOptions } = options;
  let entry: FormatEntry | undefined;
  if (format !== undefined && format !== '') {
    entry = findFormat(format);
    if (!entry) {
      throw new InputError(`unknown format '${format}' for ${displayName(path)} (known: ${knownFormats()})`, path);
    }
  }
  if (path === '-') {
    if (entry && entry.format !== 'csv' && entry.format !== 'tsv') {
      throw new InputError(`standard input can be read only as CSV or TSV, not as ${entry.format}; give a file name instead`, path);
    }
    checkOptionsApply('csv', options, path);
    return openCsv(path, { ...readerOptions, delimiter: options.delimiter ?? (entry?.format === 'tsv' ? '\t' : undefined) });
  }

  const src = await openSource(path, { maxInflatedBytes: options.maxInflatedBytes });
  entry ??= FORMATS.find((f) => f.sniff?.(src.head));
  if (!entry) {
    const ext = formatExtension(path, src.gzip);
    entry = FORMATS.find((f) => f.extensions.includes(ext));
    if (!entry) {
      throw new InputError(
        `cannot tell the format of ${path} from its contents or its extension ${ext === '' ? '(none)' : `'${ext}'`}; ` +
          `name one with --format (${knownFormats()})`,
        path,
      );
    }
  }
  if (src.gzip && !entry.streams) {
    throw new InputError(
      `${path} is a gzip-compressed ${entry.format} file; ${entry.format} needs random access, so decompress it first (gunzip -k ${path})`,
      path,
    );
  }
  checkOptionsApply(entry.format, options, path);
  if (TEXT_FORMATS.has(entry.format)) checkText(src, entry.format);
  const reader = await entry.open(src, readerOptions);
  // ECSV does both itself, on its inner CSV reader's notes (its own `notes` is a merged copy).
  if (TEXT_FORMATS.has(entry.format) && entry.format !== 'ecsv') {
    src.attachNotes(reader.notes);
    if (src.encodingNote) reader.notes?.unshift(src.encodingNote);
  }
  return reader;
}

/**
 * Refusals that only make sense for text: an encoding no reader decodes, and an HTML page (a
 * download that returned an error or login page) where a table should be. Both would otherwise
 * become one column of nonsense and findings that hide the real problem.
 */
function checkText(src: InputSource, format: string): void {
  if (src.encoding === 'utf-32le' || src.encoding === 'utf-32be') {
    throw new InputError(
      `${src.name} is ${src.encodingNote}, which starsieve does not read; convert it to UTF-8 first (iconv -f UTF-32 -t UTF-8)`,
      src.path,
      'byte 0',
    );
  }
  if (format === 'votable') return;
  const text = new TextDecoder(src.encoding === 'utf-8' ? 'utf-8' : src.encoding).decode(src.head.subarray(0, 512));
  const start = text.replace(/^[\ufeff\s]+/, '').slice(0, 64);
  const m = /^<(!doctype\s+html|html[\s>]|head[\s>]|body[\s>])/i.exec(start);
  if (m) {
    throw new InputError(
      `${src.name}, line 1: this is an HTML page, not a ${format.toUpperCase()} table (it starts with ${JSON.stringify(start.split('\n')[0].slice(0, 40))}); ` +
        'a download that returned an error or login page? Fetch the file again',
      src.path,
      'line 1',
    );
  }
}

/** --hdu and --table belong to one format each; on another they are a mistake worth saying. */
function checkOptionsApply(format: string, options: OpenOptions, path: string): void {
  if (options.hdu !== undefined && format !== 'fits') {
    throw new InputError(`--hdu applies to FITS files, but ${displayName(path)} is read as ${format}`, path);
  }
  if (options.table !== undefined && format !== 'votable') {
    throw new InputError(`--table applies to VOTable files, but ${displayName(path)} is read as ${format}`, path);
  }
}
