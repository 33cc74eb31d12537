/**
 * From numbers as written to the engine's canonical units, in loops over typed arrays. A bound
 * unit string is parsed once per column here, never per row.
 */
import { QUANTITY_INFO, type NumericQuantity } from '../../rules/engine/quantities.js';
import { BindingError } from './types.js';
import { parseUnit, unitForQuantity, QUANTITY_DIMENSION, type ParsedUnit, type QuantityUnit } from './units.js';

/**
 * How the engine holds a quantity: `linear` in its unit (L keeps log10 beside it), `logg` as log10
 * of cm s^-2, `direct` where the written number already is the canonical one ([Fe/H] dex, mag).
 */
export type ValueClass = 'linear' | 'logg' | 'direct';

const VALUE_CLASS: Readonly<Record<NumericQuantity, ValueClass>> = {
  mass: 'linear',
  luminosity: 'linear',
  radius: 'linear',
  teff: 'linear',
  logg: 'logg',
  feh: 'direct',
  hydrogenFraction: 'linear',
  parallax: 'linear',
  distance: 'linear',
  mbol: 'direct',
};

export interface ValueSpec {
  quantity: NumericQuantity;
  cls: ValueClass;
  /** The written numbers are log10 of the unit. */
  log: boolean;
  factor: number;
  log10Factor: number;
}

export interface ErrorSpec {
  /** The uncertainty is in dex (of a log value, or declared so). */
  dex: boolean;
  factor: number;
}

function parseFor(q: NumericQuantity, unit: string, column: string): ParsedUnit {
  try {
    return parseUnit(unit, QUANTITY_DIMENSION[q]);
  } catch (e) {
    if (e instanceof BindingError) throw new BindingError(`column \`${column}\`: ${e.message}`, column);
    throw e;
  }
}

function article(word: string): string {
  return /^[aeiou]/i.test(word) ? 'an' : 'a';
}

/** The unit as a unit of q, or a BindingError that says why it cannot be. */
export function quantityUnit(q: NumericQuantity, unit: string, column: string, origin: string): QuantityUnit {
  const parsed = parseFor(q, unit, column);
  const qu = unitForQuantity(q, parsed);
  if (!qu) {
    const what = parsed.dimension === 'dimensionless' ? 'a pure number' : `${article(parsed.dimension)} ${parsed.dimension} unit`;
    throw new BindingError(
      `column \`${column}\` is bound to ${QUANTITY_INFO[q].label}, but its unit \`${unit}\` (${origin}) is ${what}; ` +
        `fix the unit with --unit ${column}=UNIT or leave the column out with --bind ${column}=none`,
      column,
    );
  }
  if (VALUE_CLASS[q] === 'direct' && qu.log) {
    throw new BindingError(`column \`${column}\`: ${QUANTITY_INFO[q].label} cannot be read from a log unit \`${unit}\``, column);
  }
  return qu;
}

export function valueSpec(q: NumericQuantity, unit: string, column: string): ValueSpec {
  const qu = quantityUnit(q, unit, column, 'bound unit');
  return { quantity: q, cls: VALUE_CLASS[q], log: qu.log, factor: qu.factor, log10Factor: Math.log10(qu.factor) };
}

export function errorSpec(q: NumericQuantity, unit: string, column: string): ErrorSpec {
  const parsed = parseFor(q, unit, column);
  if (parsed.log || parsed.dimension === 'dex') return { dex: true, factor: 1 };
  return { dex: false, factor: quantityUnit(q, unit, column, 'uncertainty unit').factor };
}

/** Written numbers -> canonical values (and log10 for luminosity). */
export function convertValues(raw: Float64Array, spec: ValueSpec, value: Float64Array, log: Float64Array | null): void {
  const n = raw.length;
  const f = spec.factor;
  const lf = spec.log10Factor;
  if (spec.cls === 'direct') {
    if (f === 1) value.set(raw);
    else for (let i = 0; i < n; i++) value[i] = raw[i] * f;
    return;
  }
  if (spec.cls === 'logg') {
    if (spec.log) for (let i = 0; i < n; i++) value[i] = raw[i] + lf;
    else for (let i = 0; i < n; i++) value[i] = Math.log10(raw[i] * f);
    return;
  }
  if (spec.log) {
    if (log) {
      for (let i = 0; i < n; i++) {
        const l = raw[i] + lf;
        log[i] = l;
        value[i] = Math.pow(10, l);
      }
    } else {
      for (let i = 0; i < n; i++) value[i] = Math.pow(10, raw[i] + lf);
    }
  } else if (log) {
    for (let i = 0; i < n; i++) {
      const v = raw[i] * f;
      value[i] = v;
      log[i] = Math.log10(v);
    }
  } else {
    for (let i = 0; i < n; i++) value[i] = raw[i] * f;
  }
}

/**
 * One side of an uncertainty, as a magnitude in the canonical unit. `a` holds the magnitudes as
 * written. A dex error on a linear quantity becomes asymmetric in linear space, which is why both
 * sides are computed from the value rather than scaled once. `outLog` (luminosity) gets the side in
 * dex; a lower error reaching zero or below is an unbounded log error (Infinity).
 */
export function convertErrorSide(
  a: Float64Array,
  side: 'lo' | 'hi',
  spec: ValueSpec,
  es: ErrorSpec,
  value: Float64Array,
  out: Float64Array,
  outLog: Float64Array | null,
): void {
  const n = a.length;
  if (spec.cls === 'direct') {
    if (es.factor === 1) out.set(a);
    else for (let i = 0; i < n; i++) out[i] = a[i] * es.factor;
    return;
  }
  if (spec.cls === 'logg') {
    if (es.dex) {
      out.set(a);
      return;
    }
    for (let i = 0; i < n; i++) {
      const v = value[i];
      const g = Math.pow(10, v);
      const e = a[i] * es.factor;
      if (side === 'hi') out[i] = Math.log10(g + e) - v;
      else out[i] = g - e > 0 ? v - Math.log10(g - e) : e === e && v === v ? Infinity : NaN;
    }
    return;
  }
  if (es.dex) {
    if (side === 'hi') for (let i = 0; i < n; i++) out[i] = value[i] * (Math.pow(10, a[i]) - 1);
    else for (let i = 0; i < n; i++) out[i] = value[i] * (1 - Math.pow(10, -a[i]));
    if (outLog) outLog.set(a);
    return;
  }
  const f = es.factor;
  for (let i = 0; i < n; i++) out[i] = a[i] * f;
  if (!outLog) return;
  for (let i = 0; i < n; i++) {
    const v = value[i];
    const e = out[i];
    if (side === 'hi') outLog[i] = Math.log10(v + e) - Math.log10(v);
    else outLog[i] = v - e > 0 ? Math.log10(v) - Math.log10(v - e) : v > 0 && e === e ? Infinity : NaN;
  }
}
