/**
 * FITS headers (FITS Standard 4.0, sections 3-4): 2880-byte blocks of 80-character cards, ended
 * by an END card. Values are strings in single quotes (`''` is one quote; trailing blanks do not
 * count), logicals T/F, integers and reals (a `D` exponent is allowed); long strings continue
 * over CONTINUE cards when the value ends in `&`.
 */
import type { ByteQueue } from './byte-queue.js';
import { InputError } from './types.js';

export const BLOCK = 2880;
export const CARD = 80;
const CARDS_PER_BLOCK = BLOCK / CARD;
/** A header longer than this is not a FITS header (or one no catalog has): 100 000 cards. */
const MAX_HEADER_BLOCKS = 2778;

export type CardValue = string | number | boolean | null;

export interface Card {
  keyword: string;
  value: CardValue;
  /** The value field as written, without comment or quotes' padding (exact digits for big integers). */
  text: string;
  /** 1-based card number within its header. */
  number: number;
}

export class FitsHeader {
  readonly cards: Card[] = [];
  private readonly byKeyword = new Map<string, Card>();

  constructor(
    /** 0-based HDU number (0 = primary). */
    readonly hdu: number,
    /** File offset of the header's first byte. */
    readonly offset: number,
  ) {}

  /** Bytes the header occupies, padding included; set once END is found. */
  bytes = 0;

  add(card: Card): void {
    this.cards.push(card);
    // The standard says a keyword should appear once; where it repeats, the first one counts.
    if (!this.byKeyword.has(card.keyword)) this.byKeyword.set(card.keyword, card);
  }

  has(keyword: string): boolean {
    return this.byKeyword.has(keyword);
  }

  card(keyword: string): Card | undefined {
    return this.byKeyword.get(keyword);
  }

  value(keyword: string): CardValue | undefined {
    return this.byKeyword.get(keyword)?.value;
  }

  string(keyword: string): string | null {
    const v = this.value(keyword);
    return typeof v === 'string' ? v : null;
  }

  /** A numeric value, or undefined when absent; an InputError when present but not a number. */
  number(keyword: string, where: (card: Card) => string): number | undefined {
    const c = this.byKeyword.get(keyword);
    if (c === undefined || c.value === null) return undefined;
    if (typeof c.value !== 'number') {
      throw new FitsFormatError(`${keyword} should be a number but is ${JSON.stringify(c.value)}`, where(c));
    }
    return c.value;
  }

  /** A required non-negative integer keyword. */
  integer(keyword: string, where: (card: Card | null) => string): number {
    const v = this.number(keyword, where);
    if (v === undefined) throw new FitsFormatError(`the mandatory keyword ${keyword} is missing`, where(null));
    if (!Number.isInteger(v) || v < 0) throw new FitsFormatError(`${keyword} = ${v} is not a non-negative integer`, where(this.card(keyword)!));
    return v;
  }
}

/** A structural problem in the file; the reader adds the file name and turns it into an InputError. */
export class FitsFormatError extends Error {
  constructor(
    message: string,
    readonly position: string,
  ) {
    super(message);
  }
}

/** Parses the value field of a card (bytes 11-80), without the comment. */
export function parseValue(field: string): CardValue {
  const s = field.trimStart();
  if (s.startsWith("'")) return parseString(s);
  const slash = s.indexOf('/');
  const t = (slash === -1 ? s : s.slice(0, slash)).trim();
  if (t === '') return null;
  if (t === 'T') return true;
  if (t === 'F') return false;
  const n = Number(t.replace(/[dD]/, 'E'));
  // Complex values `(re, im)` and anything else stay text; no keyword we read has them.
  return Number.isNaN(n) || /^0[xXbBoO]/.test(t) ? t : n;
}

/** A quoted FITS string: `''` is one quote, trailing blanks are not significant, leading ones are. */
function parseString(s: string): string {
  let out = '';
  let i = 1;
  for (;;) {
    const q = s.indexOf("'", i);
    if (q === -1) {
      // Unterminated: take the rest, as most readers do.
      out += s.slice(i);
      break;
    }
    out += s.slice(i, q);
    if (s[q + 1] === "'") {
      out += "'";
      i = q + 2;
      continue;
    }
    break;
  }
  return out.replace(/ +$/, '');
}

/**
 * Reads one header from the queue. Returns null when the stream ends cleanly before the first
 * byte (no more HDUs); throws FitsFormatError when it ends inside a header or the cards are not
 * FITS cards.
 */
export async function readHeader(q: ByteQueue, hdu: number): Promise<FitsHeader | null> {
  const offset = q.position;
  let header: FitsHeader | null = null;
  let cardNo = 0;
  /** A string value ending in `&` may go on in CONTINUE cards. */
  let open: Card | null = null;
  for (let block = 0; ; block++) {
    if (block >= MAX_HEADER_BLOCKS) {
      throw new FitsFormatError(`no END card in the first ${MAX_HEADER_BLOCKS * CARDS_PER_BLOCK} cards of HDU ${hdu}'s header`, `byte ${offset}`);
    }
    const buf = await q.read(BLOCK);
    if (buf.length === 0 && block === 0) return null;
    if (buf.length < BLOCK) {
      throw new FitsFormatError(
        buf.length === 0
          ? `the file ends inside HDU ${hdu}'s header (no END card)`
          : `the file ends inside HDU ${hdu}'s header: a 2880-byte block has only ${buf.length} bytes (truncated file, or blocks of the wrong size)`,
        `byte ${q.position}`,
      );
    }
    const text = buf.toString('latin1');
    if (block === 0) {
      const first = text.slice(0, 9);
      if (hdu === 0 ? first !== 'SIMPLE  =' : first !== 'XTENSION=') {
        const expected = hdu === 0 ? 'SIMPLE  =' : 'XTENSION=';
        throw new FitsFormatError(
          `HDU ${hdu} does not start with a ${expected.replace(/ +=/, '').replace('=', '')} card; ` +
            (hdu === 0 ? 'this is not a FITS file' : 'the previous HDU is longer or shorter than its header says (blocks of the wrong size?)'),
          `byte ${offset}`,
        );
      }
      header = new FitsHeader(hdu, offset);
    }
    for (let c = 0; c < CARDS_PER_BLOCK; c++) {
      cardNo++;
      const card = text.slice(c * CARD, (c + 1) * CARD);
      const keyword = card.slice(0, 8).trimEnd();
      const position = `HDU ${hdu}, header card ${cardNo} (byte ${offset + (cardNo - 1) * CARD})`;
      // Stray non-ASCII text in a comment is common and harmless; in the keyword field it means the bytes are not a header.
      if (/[^\x20-\x7e]/.test(card.slice(0, 10))) {
        throw new FitsFormatError(`header card ${cardNo} of HDU ${hdu} holds bytes that are not printable ASCII (a damaged header?)`, position);
      }
      if (keyword === 'END') {
        const rest = text.slice((c + 1) * CARD);
        if (rest.trim() !== '' || card.slice(3).trim() !== '') {
          throw new FitsFormatError(
            `the END card of HDU ${hdu} is followed by non-blank bytes in its 2880-byte block; the header is not padded to a whole block (wrong block size?)`,
            position,
          );
        }
        header!.bytes = (block + 1) * BLOCK;
        return header!;
      }
      if (keyword === 'CONTINUE' && card.slice(8, 10) !== '= ') {
        if (open !== null && typeof open.value === 'string' && open.value.endsWith('&')) {
          const more = parseValue(card.slice(8));
          if (typeof more === 'string') {
            open.value = open.value.slice(0, -1) + more;
            continue;
          }
        }
        open = null;
        continue;
      }
      if (card.slice(8, 10) !== '= ' || keyword === '' || keyword === 'COMMENT' || keyword === 'HISTORY') {
        open = null;
        continue;
      }
      const valueField = card.slice(10);
      const slash = valueField.indexOf('/');
      const written = (valueField.trimStart().startsWith("'") || slash === -1 ? valueField : valueField.slice(0, slash)).trim();
      const parsed: Card = { keyword, value: parseValue(valueField), text: written, number: cardNo };
      header!.add(parsed);
      open = parsed;
    }
  }
}

/** Bytes of data after a header, before padding: |BITPIX|/8 * GCOUNT * (PCOUNT + NAXIS1 * ... * NAXISn). */
export function dataBytes(h: FitsHeader): number {
  const where = (card: Card | null) => (card ? `HDU ${h.hdu}, header card ${card.number}` : `HDU ${h.hdu} header`);
  const bitpix = h.number('BITPIX', where);
  if (bitpix === undefined || ![8, 16, 32, 64, -32, -64].includes(bitpix)) {
    throw new FitsFormatError(`BITPIX is ${bitpix ?? 'missing'}; it must be 8, 16, 32, 64, -32 or -64`, where(h.card('BITPIX') ?? null));
  }
  const naxis = h.integer('NAXIS', where);
  let product = naxis === 0 ? 0 : 1;
  // Random groups (a primary with NAXIS1 = 0 and GROUPS = T) leave NAXIS1 out of the product.
  const groups = h.hdu === 0 && h.value('GROUPS') === true;
  for (let k = 1; k <= naxis; k++) {
    const n = h.integer(`NAXIS${k}`, where);
    if (k === 1 && groups && n === 0) continue;
    product *= n;
  }
  const pcount = h.number('PCOUNT', where) ?? 0;
  const gcount = h.number('GCOUNT', where) ?? 1;
  if (product === 0 && !groups) return (Math.abs(bitpix) / 8) * pcount * gcount;
  return (Math.abs(bitpix) / 8) * gcount * (pcount + product);
}

export function padded(bytes: number): number {
  return Math.ceil(bytes / BLOCK) * BLOCK;
}
