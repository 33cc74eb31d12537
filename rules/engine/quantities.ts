/**
 * The physical quantities a catalog column can be bound to, and the canonical unit each is held
 * in inside the engine. Readers and binders convert to these units; rules only ever see them.
 */

export const NUMERIC_QUANTITIES = [
  'mass',
  'luminosity',
  'radius',
  'teff',
  'logg',
  'feh',
  'hydrogenFraction',
  'parallax',
  'distance',
  'mbol',
] as const;

export type NumericQuantity = (typeof NUMERIC_QUANTITIES)[number];

/** Quantities bound to text: the star's identifier and an evolutionary stage or spectral class. */
export const TEXT_QUANTITIES = ['id', 'stage'] as const;
export type TextQuantity = (typeof TEXT_QUANTITIES)[number];

export type Quantity = NumericQuantity | TextQuantity;

export interface QuantityInfo {
  /** Canonical unit as a VOUnits string. */
  unit: string;
  /** Short label used in messages and tables. */
  label: string;
  /** True when a linear value must be strictly positive to be physical. */
  positive: boolean;
}

export const QUANTITY_INFO: Record<NumericQuantity, QuantityInfo> = {
  mass: { unit: 'solMass', label: 'mass', positive: true },
  luminosity: { unit: 'solLum', label: 'luminosity', positive: true },
  radius: { unit: 'solRad', label: 'radius', positive: true },
  teff: { unit: 'K', label: 'Teff', positive: true },
  logg: { unit: 'log(cm.s-2)', label: 'logg', positive: false },
  feh: { unit: 'dex', label: '[Fe/H]', positive: false },
  hydrogenFraction: { unit: '', label: 'hydrogen mass fraction X', positive: false },
  parallax: { unit: 'mas', label: 'parallax', positive: false },
  distance: { unit: 'pc', label: 'distance', positive: true },
  mbol: { unit: 'mag', label: 'M_bol', positive: false },
};

export function isNumericQuantity(q: string): q is NumericQuantity {
  return (NUMERIC_QUANTITIES as readonly string[]).includes(q);
}

export function isQuantity(q: string): q is Quantity {
  return isNumericQuantity(q) || (TEXT_QUANTITIES as readonly string[]).includes(q);
}
