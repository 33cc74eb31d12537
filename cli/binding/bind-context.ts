/**
 * What the binder's steps share: a column's claim to a quantity, the unit it was given, and the
 * view of the binder that unit resolution and uncertainty matching need. Kept apart so those
 * steps live in their own modules without reaching into the Binder class.
 */
import type { NumericQuantity, Quantity } from '../../rules/engine/quantities.js';
import type { ColumnMeta } from '../readers/types.js';
import type { NameGuess, NameRole } from './names.js';
import type { BindOptions, ErrorBinding, QuantitySource, UnitSource } from './types.js';
import type { QuantityUnit } from './units.js';

export interface Candidate {
  index: number;
  column: string;
  quantity: Quantity;
  role: NameRole;
  source: QuantitySource;
  score: number;
  guess: NameGuess;
  ucd: string | null;
  /** For an uncertainty: the index of its value column, once known. */
  base: number | null;
}

export interface Resolved {
  unit: string;
  source: UnitSource;
  phrase: string;
  qu: QuantityUnit;
}

export interface Chosen {
  cand: Candidate;
  resolved: Resolved | null;
  errors: ErrorBinding[];
}

export interface BindContext {
  readonly meta: readonly ColumnMeta[];
  readonly options: BindOptions;
  readonly candidates: readonly Candidate[];
  /** Quantities settled so far; a later one may lean on them (L on R and Teff). */
  readonly chosen: ReadonlyMap<Quantity, Chosen>;
  /** Notes for the report, in the order the binder reached them. */
  readonly notes: string[];
  /** A column of the sample as the numbers written; null without a sample. */
  sampleRaw(index: number): Float64Array | null;
  /** The sample's values of a bound quantity in canonical units; null if it is not bound. */
  sampleCanonical(q: NumericQuantity): Float64Array | null;
}
