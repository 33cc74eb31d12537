/**
 * The user's --bind and --unit options as the binder reads them: a role per column, a unit per
 * column, and the messages when either is not what it should be.
 */
import {
  NUMERIC_QUANTITIES,
  TEXT_QUANTITIES,
  isNumericQuantity,
  isQuantity,
  type Quantity,
} from '../../rules/engine/quantities.js';
import type { NameRole } from './names.js';
import { BindingError, type BindOptions } from './types.js';
import { parseUnit } from './units.js';

export interface OptionRole {
  quantity: Quantity;
  role: NameRole;
}

const ROLE_SUFFIX: Readonly<Record<string, NameRole>> = {
  err: 'sym',
  error: 'sym',
  errlo: 'lo',
  lo: 'lo',
  errhi: 'hi',
  hi: 'hi',
};

function quantityNamed(name: string): Quantity | null {
  if (isQuantity(name)) return name;
  const lower = name.toLowerCase();
  for (const q of [...NUMERIC_QUANTITIES, ...TEXT_QUANTITIES]) if (q.toLowerCase() === lower) return q;
  return null;
}

/** Where options came from when not from the command line: column -> `the binding file b.yaml, line 3`. */
export interface BindOrigins {
  /** Where each `bind` entry came from. */
  origins?: Readonly<Record<string, string>>;
  /** Where each `units` entry came from. */
  unitOrigins?: Readonly<Record<string, string>>;
}

/** How messages name the source of a column's role: `--bind`, or the binding-file line. */
export function optionOrigin(options: BindOptions, column: string): string {
  const origins = (options as BindOptions & BindOrigins).origins;
  return origins !== undefined && Object.hasOwn(origins, column) ? origins[column] : '--bind';
}

/** The same for a column's unit: `--unit`, or the binding-file line. */
export function unitOrigin(options: BindOptions, column: string): string {
  const origins = (options as BindOptions & BindOrigins).unitOrigins;
  return origins !== undefined && Object.hasOwn(origins, column) ? origins[column] : '--unit';
}

/** The --unit value for a column; own keys only, so a column called `constructor` is just a name. */
export function optionUnit(options: BindOptions, column: string): string | null {
  return Object.hasOwn(options.units, column) ? options.units[column] : null;
}

/** A role the way --bind spells it: `mass`, `mass.err`, `mass.errLo`, `mass.errHi`. */
export function roleText(r: OptionRole): string {
  return r.role === 'value' ? r.quantity : `${r.quantity}.${r.role === 'sym' ? 'err' : r.role === 'lo' ? 'errLo' : 'errHi'}`;
}

export function parseOptionRole(column: string, text: string): OptionRole | 'none' {
  const t = text.trim();
  if (t === 'none') return 'none';
  const m = /^([A-Za-z]+)(?:\.([A-Za-z]+))?$/.exec(t);
  const q = m ? quantityNamed(m[1]) : null;
  const suffix = m?.[2]?.toLowerCase();
  const role: NameRole | undefined = suffix === undefined ? 'value' : Object.hasOwn(ROLE_SUFFIX, suffix) ? ROLE_SUFFIX[suffix] : undefined;
  if (!q || !role || (role !== 'value' && !isNumericQuantity(q))) {
    throw new BindingError(
      `--bind ${column}=${text}: \`${text}\` is not a role; use a quantity (${[...NUMERIC_QUANTITIES, ...TEXT_QUANTITIES].join(', ')}), ` +
        `an uncertainty such as mass.err, mass.errLo or mass.errHi, or none`,
      column,
    );
  }
  return { quantity: q, role };
}

/** A unit given with --unit for a column of no known quantity: it must at least be a unit. */
export function checkUnitText(unit: string, column: string): void {
  try {
    parseUnit(unit);
  } catch (e) {
    if (e instanceof BindingError) throw new BindingError(`--unit ${column}=${unit}: ${e.message}`, column);
    throw e;
  }
}
