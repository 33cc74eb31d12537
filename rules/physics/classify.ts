import type { NumericQuantity } from '../engine/quantities.js';
import type { Batch } from '../engine/types.js';
import { loggFromMassRadius } from './stellar.js';

/**
 * Coarse evolutionary class of a star, from a stage or spectral-type text when there is one,
 * else from logg (quoted, or computed from M and R), R and Teff. Used to keep main-sequence
 * relations off giants, white dwarfs and hot subdwarfs, and to judge each value against the range
 * of its own class (value-out-of-range).
 */
export const StarClass = {
  Unknown: 0,
  MainSequence: 1,
  Giant: 2,
  WhiteDwarf: 3,
  Subdwarf: 4,
  BrownDwarf: 5,
} as const;
export type StarClass = (typeof StarClass)[keyof typeof StarClass];

export const STAR_CLASS_NAMES = ['unknown', 'main sequence', 'giant or subgiant', 'white dwarf', 'hot subdwarf', 'brown dwarf'] as const;

/**
 * Main-sequence logg band in cgs. Along the Tout et al. 1996 ZAMS logg runs 3.97-5.21 and the
 * Mamajek dwarf sequence 3.95 (O3V) to 5.32 (M9.5V) (physics-reference.md §6, derived); evolved
 * main-sequence stars reach about 3.5 (from memory). White dwarfs sit at 6.5-9.5.
 */
export const MS_LOGG_MIN = 3.5;
export const MS_LOGG_MAX = 5.5;

/**
 * Hydrogen-burning minimum mass, about 0.075 M_sun at solar metallicity (0.072-0.083 with
 * metallicity; physics-reference.md §6). Below it an object is a brown dwarf, not a star.
 */
export const HYDROGEN_BURNING_MIN_MASS = 0.075;
/** Deuterium-burning limit, about 13 M_Jup = 0.0124 M_sun: below it, a planetary mass (physics-reference.md §6). */
export const DEUTERIUM_BURNING_MASS = 0.0124;
/**
 * The most massive stars known: R136a1 at about 200-320 M_sun (Crowther et al. 2010; revised to
 * 170-230 by Kalari et al. 2022), with an upper limit near 300 M_sun (physics-reference.md §6).
 */
export const MAX_STELLAR_MASS = 300;

/** A closed range of a quantity in its canonical unit, and where its ends come from. */
export interface ValueRange {
  min: number;
  max: number;
  source: string;
}

/**
 * What any star or brown dwarf can have, whatever its class (canonical units). Outside these the
 * value is impossible: value-out-of-range reports an error, and sentinel-value reads a missing-value
 * code there as a code. Linear quantities must also be strictly positive (QUANTITY_INFO.positive).
 */
export const STELLAR_LIMITS: Readonly<Partial<Record<NumericQuantity, ValueRange>>> = {
  mass: { min: 0, max: MAX_STELLAR_MASS, source: 'physics-reference.md §6: the most massive stars known, about 300 M_sun' },
  luminosity: {
    min: 1e-9,
    max: Math.pow(10, 7.5),
    source: 'from memory: the coolest Y dwarfs reach about 1e-7 L_sun, the brightest stars (R136a1) about 10^6.9 L_sun',
  },
  radius: {
    min: 0.001,
    max: 3000,
    source: 'physics-reference.md §6 (a 1.4 M_sun white dwarf has 0.0025 R_sun); from memory, the largest red supergiants reach 1500-2200 R_sun',
  },
  teff: { min: 200, max: 300_000, source: 'from memory: Y dwarfs near 250 K; the hottest white dwarfs and planetary-nebula nuclei about 250 kK' },
  logg: {
    min: -1.5,
    max: 9.8,
    source: 'physics-reference.md §6: 9.79 for 1.4 M_sun and 0.0025 R_sun (cold mass-radius relation, derived); supergiants reach about -0.5 (from memory)',
  },
  feh: { min: -10, max: 2, source: 'from memory: the most iron-poor star known is near [Fe/H] = -7, the most metal-rich near +0.6' },
  hydrogenFraction: { min: 0, max: 1, source: 'a mass fraction lies in 0..1 by definition' },
  parallax: { min: -50, max: 1000, source: 'from memory: Proxima Centauri has the largest parallax, 768 mas; negative parallaxes are noise of a few mas' },
  distance: { min: 0, max: 1e10, source: 'from memory: the farthest single stars seen (lensed) lie a few Gpc away' },
  mbol: { min: -15, max: 30, source: 'the luminosity limits above on the IAU 2015 B2 scale (M_bol = 4.74 - 2.5 log L)' },
};

/**
 * Ranges typical of each class (canonical units), beyond which a value contradicts the class (a
 * warning in value-out-of-range). Bounds are deliberately generous; a star near one is not odd.
 */
export const CLASS_RANGES: Readonly<Partial<Record<StarClass, Partial<Record<NumericQuantity, ValueRange>>>>> = {
  [StarClass.MainSequence]: {
    teff: { min: 2300, max: 55_000, source: 'physics-reference.md §6: Mamajek M9.5V 2330 K; about 55 kK for O2 and metal-poor stars (Tout ZAMS, derived)' },
    radius: { min: 0.07, max: 30, source: 'physics-reference.md §5-6: Mamajek M9.5V 0.101 R_sun, Tout ZAMS 17 R_sun at 100 M_sun; evolved main-sequence stars about twice their ZAMS radius (from memory)' },
    logg: { min: MS_LOGG_MIN, max: MS_LOGG_MAX, source: 'physics-reference.md §6: 3.95-5.32 along the dwarf sequence, evolved main-sequence stars to about 3.5' },
  },
  [StarClass.WhiteDwarf]: {
    mass: { min: 0.15, max: 1.46, source: 'physics-reference.md §6: the lowest-mass ELM white dwarf 0.17 M_sun (Kilic et al. 2007); Chandrasekhar mass 1.38-1.46' },
    radius: { min: 0.002, max: 0.15, source: 'physics-reference.md §6 and T10: 0.002-0.03 R_sun for normal white dwarfs, up to about 0.15 for ELM white dwarfs' },
    teff: { min: 2500, max: 250_000, source: 'from memory: the coolest known white dwarfs are near 3000 K, the hottest about 250 kK' },
    logg: { min: 5, max: 9.8, source: 'physics-reference.md §6: 6.5-9.5 for normal white dwarfs, 5-7 for ELM white dwarfs; 9.8 near the Chandrasekhar mass' },
  },
  [StarClass.Subdwarf]: {
    teff: { min: 15_000, max: 100_000, source: 'from memory: sdB stars 20-40 kK, sdO stars 40-100 kK (MWDD PROVENANCE: sdB about 20-40 kK)' },
    logg: { min: 4.5, max: 6.8, source: 'from memory: sdB and sdO stars have logg 5-6.5 (MWDD PROVENANCE: sdB about 5.5)' },
  },
  [StarClass.BrownDwarf]: {
    teff: { min: 200, max: 3000, source: 'physics-reference.md §6: Mamajek L0V 2270 K down to Y4V near 250 K' },
    mass: { min: 0, max: 0.1, source: 'physics-reference.md §6: the hydrogen-burning limit, 0.072-0.083 M_sun' },
  },
};

const WD_TEXT = /^(?:D[ABCOQZXHP]|D\b|DA\d|WD\b|white\s*dwarf|He-DA)/;
const WD_TEXT_I = /^(?:wd\b|white\s*dwarf)/i;
const SD_TEXT = /^(?:sd[OB]|subdwarf(?!\s*[AFGKM])|hot\s*subdwarf)/i;
const BD_TEXT = /^(?:[LTY]\d|brown\s*dwarf)/i;
const GIANT_WORDS = /(?:giant|\bRGB\b|\bAGB\b|\bHB\b|clump)/i;
const MS_WORDS = /(?:^MS$|main[\s-]*sequence|dwarf|^d[OBAFGKM]\d?)/i;
/**
 * A Morgan-Keenan luminosity class after a spectral type (`K0 III`, `G8IV-V`, `M4.5Ve`, `B0.5Ia`,
 * `K0IIIvar`), or alone (`V`). Only the first class of a range counts, so `IV-V` is a subgiant.
 * Upper-case numerals only: lower-case letters after them are peculiarity flags (e, var, p, n).
 */
const MK_CLASS = /(?:[OBAFGKM](?:\d+(?:\.\d+)?)?(?![\d.])\s*\(?(Iab|Ia\+?|Ib|III|II|IV|I|VI|V)(?![IVX])|^(Iab|Ia\+?|Ib|III|II|IV|I|VI|V)(?![A-Za-z]))/;

function classFromMk(t: string): StarClass {
  const m = MK_CLASS.exec(t);
  if (!m) return StarClass.Unknown;
  const lc = m[1] ?? m[2];
  return lc === 'V' || lc === 'VI' ? StarClass.MainSequence : StarClass.Giant;
}

/** Class from a stage or spectral-type string; Unknown when the text says nothing we recognise. */
export function classFromText(text: string | null | undefined): StarClass {
  if (!text) return StarClass.Unknown;
  const t = text.trim();
  if (t === '') return StarClass.Unknown;
  // White-dwarf types are capital D plus a letter (DA, DB, DC, DQ, DZ, DAH ...); lower-case d is
  // the dwarf prefix of main-sequence types (dK7, dMe).
  if (WD_TEXT.test(t) || WD_TEXT_I.test(t)) return StarClass.WhiteDwarf;
  if (SD_TEXT.test(t)) return StarClass.Subdwarf;
  if (BD_TEXT.test(t)) return StarClass.BrownDwarf;
  if (GIANT_WORDS.test(t)) return StarClass.Giant;
  if (MS_WORDS.test(t)) return StarClass.MainSequence;
  return classFromMk(t);
}

/** Class from logg alone (cgs); NaN gives Unknown. */
export function classFromLogg(logg: number): StarClass {
  if (!Number.isFinite(logg)) return StarClass.Unknown;
  if (logg >= 6.5) return StarClass.WhiteDwarf;
  if (logg > MS_LOGG_MAX) return StarClass.Subdwarf;
  if (logg >= MS_LOGG_MIN) return StarClass.MainSequence;
  return StarClass.Giant;
}

/**
 * Above this Teff no main-sequence star has logg >= 5.0 or R <= 0.3 R_sun (a 7000 K dwarf has
 * logg 4.3 and R 1.5; physics-reference.md §5, Tout ZAMS), so such a star is compact: a hot
 * subdwarf (logg 5.3-6, R 0.1-0.3) or an (ELM) white dwarf (the lowest-mass one has logg 5.48,
 * R 0.12; physics-reference.md §6).
 */
const COMPACT_TEFF = 7000;
const COMPACT_LOGG = 5.0;
const COMPACT_RADIUS_MAX = 0.3;
/** Hot subdwarfs (sdB/sdO) are hotter than this; ELM white dwarfs are cooler (8-22 kK, physics-reference.md §6). */
const SUBDWARF_TEFF = 20_000;
/** No main-sequence star or brown dwarf is this small (M9.5V has 0.10 R_sun): a white dwarf. */
const WD_RADIUS_MAX = 0.05;
/** No main-sequence star is this large (Tout ZAMS 17 R_sun at 100 M_sun): a giant or supergiant. */
const GIANT_RADIUS_MIN = 30;

/** Values classification trusts; anything else (a sentinel, a unit slip) is not used. */
const plausibleLogg = (g: number) => g > -2 && g < 12;
const plausibleTeff = (t: number) => t >= 200 && t <= 300_000;

/**
 * Class from values: logg (quoted, else from M and R) with Teff to tell compact hot stars from
 * dwarfs, else R with Teff. Unknown where the values do not decide.
 */
function classFromValues(logg: number, massSun: number, radiusSun: number, teffK: number): StarClass {
  const teff = plausibleTeff(teffK) ? teffK : NaN;
  let g = plausibleLogg(logg) ? logg : NaN;
  if (!Number.isFinite(g) && massSun > 0 && radiusSun > 0) {
    g = loggFromMassRadius(massSun, radiusSun);
    if (!plausibleLogg(g)) g = NaN;
  }
  if (Number.isFinite(g)) {
    if (g >= 6.5) return StarClass.WhiteDwarf;
    if (g >= COMPACT_LOGG && teff >= COMPACT_TEFF && !(radiusSun > COMPACT_RADIUS_MAX)) return teff >= SUBDWARF_TEFF ? StarClass.Subdwarf : StarClass.WhiteDwarf;
    // A cool star with logg 5.5-6.5 is a cool white dwarf or a dwarf with an overestimated logg.
    if (g > MS_LOGG_MAX && teff < COMPACT_TEFF) return StarClass.Unknown;
    return classFromLogg(g);
  }
  if (radiusSun > 0) {
    if (radiusSun <= WD_RADIUS_MAX) return StarClass.WhiteDwarf;
    if (radiusSun <= COMPACT_RADIUS_MAX && teff >= COMPACT_TEFF) return teff >= SUBDWARF_TEFF ? StarClass.Subdwarf : StarClass.WhiteDwarf;
    if (radiusSun >= GIANT_RADIUS_MIN) return StarClass.Giant;
  }
  return StarClass.Unknown;
}

/**
 * Text first (a curator's label beats a fitted logg), then the values. Teff is optional: without
 * it a compact hot star with logg 4.8-5.5 is taken for a dwarf, as logg alone says.
 */
export function classifyStar(text: string | null | undefined, logg: number, massSun: number, radiusSun: number, teffK = NaN): StarClass {
  const fromText = classFromText(text);
  if (fromText !== StarClass.Unknown) return fromText;
  return classFromValues(logg, massSun, radiusSun, teffK);
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
  const teff = batch.quantities.teff?.value ?? null;
  for (let i = 0; i < batch.length; i++) {
    out[i] = classifyStar(stage ? stage[i] : null, logg ? logg[i] : NaN, mass ? mass[i] : NaN, radius ? radius[i] : NaN, teff ? teff[i] : NaN);
  }
  classCache.set(batch, out);
  return out;
}
