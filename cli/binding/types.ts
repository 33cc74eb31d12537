import type { Quantity } from '../../rules/engine/quantities.js';

export interface BindOptions {
  /**
   * Explicit column -> role, from the command line or a config. A role is a quantity (`mass`), an
   * uncertainty of one (`mass.err`, `mass.errLo`, `mass.errHi`), or `none` to leave a column unbound.
   */
  bind: Readonly<Record<string, string>>;
  /** Explicit column -> unit string (VOUnits or a common catalog spelling). */
  units: Readonly<Record<string, string>>;
}

export type UnitSource = 'option' | 'metadata' | 'header' | 'name' | 'inferred' | 'none';
export type QuantitySource = 'option' | 'ucd' | 'name';

export interface ErrorBinding {
  /** `sym` for a symmetric error, `lo`/`hi` for the lower/upper side. */
  role: 'sym' | 'lo' | 'hi';
  column: string;
  columnIndex: number;
  unit: string;
  /** True when the catalog stores the lower error as a negative number (NASA `err2`, PHL `_ERROR_MIN`). */
  negativeStored: boolean;
}

export interface ColumnBinding {
  quantity: Quantity;
  column: string;
  columnIndex: number;
  /** Unit the values are read in, as a canonical VOUnits-style string (e.g. `solLum`, `log(solLum)`, `W`). */
  unit: string;
  quantitySource: QuantitySource;
  unitSource: UnitSource;
  /** One sentence: why this column is this quantity, and why this unit. */
  reason: string;
  errors: ErrorBinding[];
}

export interface Binding {
  columns: ColumnBinding[];
  /** Notes for the report: units inferred from values, columns passed over and why. */
  notes: string[];
  /**
   * Indices of the columns whose sample writes decimal commas (`1,5`), decided once for the input
   * so that `1,500` reads the same in every batch; absent: decided per batch.
   */
  decimalCommas?: number[];
  /** Numbers the rules asked to have measured on the sample (SAMPLE_FACTS), handed to every batch. */
  facts?: Record<string, number>;
}

/** A configuration problem: unknown unit, ambiguous binding. Reported in one line, exit code 2. */
export class BindingError extends Error {
  constructor(
    message: string,
    readonly column: string | null,
  ) {
    super(message);
    this.name = 'BindingError';
  }
}
