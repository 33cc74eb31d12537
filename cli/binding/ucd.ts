/**
 * UCDs (IVOA UCD1+): the words in a column's metadata that name our quantities, and whether the
 * column is the quantity itself or its uncertainty.
 */
import type { Quantity } from '../../rules/engine/quantities.js';

interface UcdInfo {
  quantity: Quantity;
  error: boolean;
  main: boolean;
  ucd: string;
}

const UCD_WORDS: Readonly<Record<string, Quantity>> = {
  'phys.mass': 'mass',
  'phys.luminosity': 'luminosity',
  'phys.size.radius': 'radius',
  'phys.temperature.effective': 'teff',
  'phys.gravity': 'logg',
  'phys.abund.fe': 'feh',
  'phys.abund.z': 'feh',
  'pos.parallax': 'parallax',
  'pos.parallax.trig': 'parallax',
  'pos.distance': 'distance',
  'phys.magabs.bol': 'mbol',
  'meta.id': 'id',
  'src.sptype': 'stage',
  'src.class.luminosity': 'stage',
  'src.class.stage': 'stage',
};

export function ucdInfo(ucd: string | null): UcdInfo | null {
  if (!ucd) return null;
  const words = ucd
    .split(';')
    .map((w) => w.trim().toLowerCase())
    .filter(Boolean);
  if (words.length === 0) return null;
  // A bound of an interval (`phys.size.radius;stat.min`) is neither the value nor its uncertainty.
  if (words.some((w) => w === 'stat.min' || w === 'stat.max')) return null;
  const error = words[0] === 'stat.error' || words[0] === 'stat.stdev' || words[0].startsWith('stat.error.');
  const primary = error ? words[1] : words[0];
  if (primary === undefined || !Object.hasOwn(UCD_WORDS, primary)) return null;
  const quantity = UCD_WORDS[primary];
  // A band luminosity (`phys.luminosity;em.X-ray`) is not the bolometric one the rules compare.
  if (quantity === 'luminosity' && words.some((w) => w.startsWith('em.'))) return null;
  return { quantity, error, main: words.includes('meta.main'), ucd: ucd.trim() };
}
