import type { Batch } from '../engine/types.js';
import { loggFromMassRadius } from './stellar.js';

/**
 * Coarse evolutionary class of a star, from a stage or spectral-type text when there is one,
 * else from logg (quoted, or computed from M and R). Used to keep main-sequence relations off
 * giants and white dwarfs.
 */
export const StarClass = {
  Unknown: 0,
  MainSequence: 1,
  Giant: 2,
  WhiteDwarf: 3,
  Subdwarf: 4,
} as const;
export type StarClass = (typeof StarClass)[keyof typeof StarClass];

export const STAR_CLASS_NAMES = ['unknown', 'main sequence', 'giant or subgiant', 'white dwarf', 'hot subdwarf'] as const;

/**
 * Main-sequence logg band in cgs. Along the Tout et al. 1996 ZAMS logg runs 3.97-5.21 and the
 * Mamajek dwarf sequence 3.95 (O3V) to 5.32 (M9.5V) (physics-reference.md §6, derived); evolved
 * main-sequence stars reach about 3.5 (from memory). White dwarfs sit at 6.5-9.5.
 */
export const MS_LOGG_MIN = 3.5;
export const MS_LOGG_MAX = 5.5;

const WD_TEXT = /^(?:D[ABCOQZX]|WD|white\s*dwarf)/i;
const SD_TEXT = /^(?:sd[OB]|subdwarf)/i;
const GIANT_TEXT = /(?:giant|supergiant|\bRGB\b|\bAGB\b|\bHB\b|clump|\b(?:I|II|III|IV|Ia|Iab|Ib)\b|[0-9.](?:I|II|III|IV|Ia|Iab|Ib)$)/i;
const MS_TEXT = /(?:^MS$|main[\s-]*sequence|dwarf|^V$|[0-9.]\s*V$|[A-Z]\d*(?:\.\d)?\s*V(?:[abe]|$))/i;

/** Class from a stage or spectral-type string; Unknown when the text says nothing we recognise. */
export function classFromText(text: string | null | undefined): StarClass {
  if (!text) return StarClass.Unknown;
  const t = text.trim();
  if (t === '') return StarClass.Unknown;
  if (WD_TEXT.test(t)) return StarClass.WhiteDwarf;
  if (SD_TEXT.test(t)) return StarClass.Subdwarf;
  if (GIANT_TEXT.test(t)) return StarClass.Giant;
  if (MS_TEXT.test(t)) return StarClass.MainSequence;
  return StarClass.Unknown;
}

/** Class from logg alone (cgs); NaN gives Unknown. */
export function classFromLogg(logg: number): StarClass {
  if (!Number.isFinite(logg)) return StarClass.Unknown;
  if (logg >= 6.5) return StarClass.WhiteDwarf;
  if (logg > MS_LOGG_MAX) return StarClass.Subdwarf;
  if (logg >= MS_LOGG_MIN) return StarClass.MainSequence;
  return StarClass.Giant;
}

/** Text first (a curator's label beats a fitted logg), then quoted logg, then logg from M and R. */
export function classifyStar(text: string | null | undefined, logg: number, massSun: number, radiusSun: number): StarClass {
  const fromText = classFromText(text);
  if (fromText !== StarClass.Unknown) return fromText;
  if (Number.isFinite(logg)) return classFromLogg(logg);
  if (massSun > 0 && radiusSun > 0) return classFromLogg(loggFromMassRadius(massSun, radiusSun));
  return StarClass.Unknown;
}


const classCache = new WeakMap<Batch, Uint8Array>();

/**
 * The class of every row of a batch (StarClass codes), computed once per batch and shared by all
 * rules, so that no rule applies a main-sequence relation to a giant or a white dwarf and all
 * rules agree on what each star is.
 */
export function starClasses(batch: Batch): Uint8Array {
  let out = classCache.get(batch);
  if (out) return out;
  out = new Uint8Array(batch.length);
  const stage = batch.text.stage?.values ?? null;
  const logg = batch.quantities.logg?.value ?? null;
  const mass = batch.quantities.mass?.value ?? null;
  const radius = batch.quantities.radius?.value ?? null;
  for (let i = 0; i < batch.length; i++) {
    out[i] = classifyStar(stage ? stage[i] : null, logg ? logg[i] : NaN, mass ? mass[i] : NaN, radius ? radius[i] : NaN);
  }
  classCache.set(batch, out);
  return out;
}
