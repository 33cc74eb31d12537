/**
 * ECSV 1.0 (astropy APE 6): a CSV whose `#` comment lines above the header hold one YAML
 * document with each column's name, datatype, unit and description. The data section is plain
 * delimited text, so the CSV reader reads it; this file only parses and checks the header and
 * hands its units to the binder. Units are astropy strings (`erg / s`, `dex(cm / s2)`); they are
 * rewritten into the VOUnits-like spelling the binder knows and the note says so.
 */
import { openCsv, type PreambleLine } from './csv.js';
import type { InputSource } from './source.js';
import { InputError, type CatalogReader, type ColumnMeta, type RawBatch, type ReaderOptions, type ReaderStats } from './types.js';
import { YamlProblem, parseYaml, type Position } from './yaml-text.js';

export const ECSV_SIGNATURE = [...'# %ECSV'].map((c) => c.charCodeAt(0));

const FIRST_LINE = /^# %ECSV (\d+)\.(\d+)\s*$/;

interface EcsvColumn {
  name: string;
  datatype: string;
  unit: string | null;
  description: string | null;
  subtype: string | null;
}

interface EcsvHeader {
  version: string;
  delimiter: string;
  columns: EcsvColumn[];
  /** The header line that names each column, for messages. */
  line: number;
}

export async function openEcsv(src: InputSource, options: ReaderOptions & { readChunkBytes?: number } = {}): Promise<CatalogReader> {
  let header: EcsvHeader | null = null;
  const csv = await openCsv(src.path, {
    ...options,
    textStream: src.needsDecoding ? src.text(options.readChunkBytes) : undefined,
    onPreamble: (comments) => {
      header = parseHeader(comments, src);
      return { delimiter: header.delimiter };
    },
  });
  try {
    if (header === null) throw new InputError(`${src.name}: no ECSV header found (the first line must be \`# %ECSV 1.0\`)`, src.path, 'line 1');
    // Notes from decoding (bytes that are not UTF-8) belong with the CSV reader's, which this reader shows.
    src.attachNotes(csv.notes);
    if (src.encodingNote) csv.notes?.unshift(src.encodingNote);
    return new EcsvReader(src, csv, header);
  } catch (err) {
    await csv.close();
    throw err;
  }
}

function fail(src: InputSource, message: string, p: Position): never {
  throw new InputError(`${src.name}, line ${p.line}, column ${p.column}: ${message}`, src.path, `line ${p.line}, column ${p.column}`);
}

function parseHeader(comments: readonly PreambleLine[], src: InputSource): EcsvHeader {
  const first = comments[0];
  const m = first ? FIRST_LINE.exec(first.text) : null;
  if (!first || first.line !== 1 || !m) {
    fail(src, 'an ECSV file must start with the line `# %ECSV 1.0`', { line: first?.line ?? 1, column: 1 });
  }
  // Every other header line is `# ` + YAML; `##` lines are comments the standard tells readers to ignore.
  const kept: PreambleLine[] = [];
  const yamlLines: string[] = [];
  for (const c of comments.slice(1)) {
    if (c.text.startsWith('##')) continue;
    if (c.text !== '#' && !c.text.startsWith('# ')) {
      fail(src, 'an ECSV header line must start with `# ` (hash and one space)', { line: c.line, column: 2 });
    }
    kept.push(c);
    yamlLines.push(c.text.slice(2));
  }
  const toFile = (p: Position): Position => {
    const line = kept[Math.min(kept.length, p.line) - 1];
    return line ? { line: line.line, column: p.column + 2 } : { line: first.line, column: 1 };
  };
  let parsed;
  try {
    parsed = parseYaml(yamlLines.join('\n'), toFile);
  } catch (err) {
    if (err instanceof YamlProblem) fail(src, `the ECSV header is ${err.message}`, err.position);
    throw err;
  }
  const doc = parsed.value as { datatype?: unknown; delimiter?: unknown } | null;
  if (doc === null || typeof doc !== 'object' || Array.isArray(doc)) fail(src, 'the ECSV header must be a YAML mapping with a `datatype` list', parsed.where([]));
  if (!Array.isArray(doc.datatype)) fail(src, 'the ECSV header has no `datatype` list of columns', parsed.where(['datatype']));
  let delimiter = ' ';
  if (doc.delimiter !== undefined) {
    if (doc.delimiter !== ' ' && doc.delimiter !== ',') {
      fail(src, `delimiter ${JSON.stringify(doc.delimiter)} is not allowed; ECSV allows ' ' (the default) or ','`, parsed.where(['delimiter']));
    }
    delimiter = doc.delimiter;
  }
  const columns = (doc.datatype as unknown[]).map((c, i): EcsvColumn => {
    const spec = c as Record<string, unknown> | null;
    if (spec === null || typeof spec !== 'object' || Array.isArray(spec)) fail(src, `datatype entry ${i + 1} is not a mapping with name and datatype`, parsed.where(['datatype', i]));
    if (typeof spec.name !== 'string' || spec.name === '') fail(src, `datatype entry ${i + 1} has no name`, parsed.where(['datatype', i]));
    if (typeof spec.datatype !== 'string') fail(src, `column \`${spec.name}\` has no datatype`, parsed.where(['datatype', i]));
    const text = (k: string) => (typeof spec[k] === 'string' && (spec[k] as string).trim() !== '' ? (spec[k] as string).trim() : null);
    return { name: spec.name, datatype: spec.datatype, unit: text('unit'), description: text('description'), subtype: text('subtype') };
  });
  return { version: `${m[1]}.${m[2]}`, delimiter, columns, line: (comments[comments.length - 1]?.line ?? 0) + 1 };
}

/** astropy unit strings to the spelling the binder reads: `erg / s` -> `erg/s`, `dex(cm / s2)` -> `log(cm/s2)`. */
export function ecsvUnit(unit: string): string {
  let u = unit.trim();
  const dex = /^dex\((.*)\)$/.exec(u);
  if (dex) u = `log(${dex[1].trim()})`;
  return u
    .replace(/\s*\/\s*/g, '/')
    .replace(/\s*\*\*\s*/g, '**')
    .replace(/\s+/g, '.');
}

function metaType(datatype: string): ColumnMeta['type'] {
  if (datatype === 'bool') return 'boolean';
  if (/^u?int\d+$/.test(datatype)) return 'integer';
  if (/^float\d+$/.test(datatype)) return 'float';
  return 'text';
}

class EcsvReader implements CatalogReader {
  readonly format = 'ecsv';
  readonly path: string;
  readonly columns: ColumnMeta[];
  private readonly own: string[] = [];

  constructor(
    src: InputSource,
    private readonly csv: CatalogReader,
    header: EcsvHeader,
  ) {
    this.path = src.path;
    const names = csv.columns.map((c) => c.name);
    if (names.length !== header.columns.length) {
      throw new InputError(
        `${src.name}, line ${header.line}: the column-name line has ${names.length} names, but the ECSV header describes ${header.columns.length} columns`,
        src.path,
        `line ${header.line}`,
      );
    }
    if (header.version.split('.')[0] !== '1') this.own.push(`ECSV version ${header.version}; read with the rules of version 1.0`);
    const renamed: string[] = [];
    const rewritten: string[] = [];
    this.columns = header.columns.map((h, i) => {
      if (h.name !== names[i]) renamed.push(`column ${i + 1} is \`${names[i]}\` in the data but \`${h.name}\` in the header`);
      if (h.subtype !== null) this.own.push(`\`${names[i]}\` holds ${h.subtype} values (ECSV subtype); they are read as text`);
      let unit = h.unit;
      if (unit !== null) {
        const mapped = ecsvUnit(unit);
        if (mapped !== unit) rewritten.push(`\`${unit}\` as \`${mapped}\``);
        unit = mapped;
      }
      return { name: names[i], unit, ucd: null, description: h.description, type: metaType(h.datatype) };
    });
    if (renamed.length > 0) this.own.push(`the names in the data differ from the ECSV header (${renamed.slice(0, 3).join('; ')}); the names in the data are used`);
    if (rewritten.length > 0) this.own.push(`astropy unit strings read as VOUnits: ${[...new Set(rewritten)].join(', ')}`);
  }

  get stats(): ReaderStats {
    return this.csv.stats;
  }

  get notes(): string[] {
    return [...this.own, ...(this.csv.notes ?? [])];
  }

  batches(): AsyncIterable<RawBatch> {
    return this.csv.batches();
  }

  close(): Promise<void> {
    return this.csv.close();
  }
}
