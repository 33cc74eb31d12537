/**
 * VOTable FIELDs (IVOA VOTable 1.4, sections 4-6): what each datatype and arraysize means for
 * the linter, and how one cell is laid out in the BINARY / BINARY2 serialization (big-endian,
 * no alignment, a 4-byte element count before variable-length arrays, NUL-terminated strings).
 */

export interface VoField {
  name: string;
  datatype: string;
  arraysize: string | null;
  unit: string | null;
  ucd: string | null;
  description: string | null;
  /** `<VALUES null="...">`: the magic value that means "no value" (integers, mostly). */
  nullValue: string | null;
}

/** What a cell becomes: a number, exact text (64-bit integers), a logical, a string, or nothing. */
export type CellKind = 'number' | 'long' | 'bool' | 'text' | 'skip';

export interface FieldPlan {
  field: VoField;
  kind: CellKind;
  /** Why a `skip` field is left out. */
  skipReason: string | null;
  /** Index among the columns the reader delivers; -1 for skipped fields. */
  column: number;
  /** BINARY layout: bytes per element (0 for bits), and the element count (null = variable, count-prefixed). */
  elementBytes: number;
  count: number | null;
  nullNumber: number | null;
  nullBig: bigint | null;
}

const ELEMENT_BYTES: Readonly<Record<string, number>> = {
  boolean: 1,
  bit: 0,
  unsignedByte: 1,
  short: 2,
  int: 4,
  long: 8,
  char: 1,
  unicodeChar: 2,
  float: 4,
  double: 8,
  floatComplex: 8,
  doubleComplex: 16,
};

const NUMERIC = new Set(['unsignedByte', 'short', 'int', 'float', 'double']);
const INTEGER = new Set(['unsignedByte', 'short', 'int', 'long']);

export function isKnownDatatype(datatype: string): boolean {
  return Object.hasOwn(ELEMENT_BYTES, datatype);
}

/** Elements per cell from arraysize: a number, or null for a variable size (`*`, `10*`, `3x*`). */
function elementCount(arraysize: string | null): { count: number | null; dims: number } {
  if (arraysize === null || arraysize.trim() === '') return { count: 1, dims: 0 };
  const dims = arraysize.trim().split('x');
  let count = 1;
  for (const d of dims) {
    if (d.endsWith('*')) return { count: null, dims: dims.length };
    count *= Number(d);
  }
  return { count: Number.isFinite(count) ? count : 1, dims: dims.length };
}

export function planField(field: VoField, column: number): FieldPlan {
  const { count, dims } = elementCount(field.arraysize);
  const dt = field.datatype;
  const elementBytes = ELEMENT_BYTES[dt];
  let kind: CellKind;
  let skipReason: string | null = null;
  const scalar = count === 1 && dims <= 1;
  if (dt === 'char' || dt === 'unicodeChar') {
    kind = dims <= 1 ? 'text' : 'skip';
    if (kind === 'skip') skipReason = 'arrays of strings';
  } else if (dt === 'bit') {
    kind = 'skip';
    skipReason = 'bit fields';
  } else if (dt === 'floatComplex' || dt === 'doubleComplex') {
    kind = 'skip';
    skipReason = 'complex numbers';
  } else if (!scalar) {
    kind = 'skip';
    skipReason = 'arrays of values in one cell';
  } else if (dt === 'boolean') {
    kind = 'bool';
  } else if (dt === 'long') {
    kind = 'long';
  } else {
    kind = NUMERIC.has(dt) ? 'number' : 'skip';
  }
  let nullNumber: number | null = null;
  let nullBig: bigint | null = null;
  const nv = field.nullValue?.trim();
  if (nv !== undefined && nv !== '' && (NUMERIC.has(dt) || dt === 'long')) {
    const exact = INTEGER.has(dt) ? integerValue(nv) : null;
    const n = exact !== null ? Number(exact) : Number(nv);
    if (!Number.isNaN(n)) nullNumber = n;
    if (dt === 'long') nullBig = exact;
  }
  return {
    field,
    kind,
    skipReason,
    column: kind === 'skip' ? -1 : column,
    elementBytes,
    count,
    nullNumber,
    nullBig,
  };
}

/** An integer written in decimal or hex (`0x1F`, `-0x1F`), exactly; null for anything else. */
function integerValue(text: string): bigint | null {
  const t = text.trim();
  if (!/^[+-]?(\d+|0x[0-9a-f]+)$/i.test(t)) return null;
  const v = BigInt(t.replace(/^[+-]/, ''));
  return t.startsWith('-') ? -v : v;
}

/** A TABLEDATA integer may be written in hex (`0x1F`); the binder reads decimal. */
export function decimalInteger(text: string): string {
  if (!/^\s*[+-]?0x/i.test(text)) return text;
  return integerValue(text)?.toString() ?? text;
}

/** TABLEDATA logical text (VOTable 1.4 section 6.1.1): T t 1 true / F f 0 false; `?`, blank and NUL are null. */
export function logicalText(text: string): string | null {
  const t = text.trim().toLowerCase();
  if (t === 't' || t === '1' || t === 'true') return 'true';
  if (t === 'f' || t === '0' || t === 'false') return 'false';
  return null;
}

/** Byte of a BINARY logical: 'T' 't' '1' true, 'F' 'f' '0' false, anything else null. */
export function logicalByte(b: number): string | null {
  if (b === 84 || b === 116 || b === 49) return 'true';
  if (b === 70 || b === 102 || b === 48) return 'false';
  return null;
}
