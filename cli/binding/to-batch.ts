/**
 * Raw batches to canonical engine batches, with the conversion plan worked out once per binding.
 */
import { isNumericQuantity, type NumericQuantity, type TextQuantity } from '../../rules/engine/quantities.js';
import type { Batch, InputProblem, QuantityColumn, TextColumn, WrittenErrors } from '../../rules/engine/types.js';
import type { RawBatch } from '../readers/types.js';
import { readNumbers, readText } from './cells.js';
import { convertErrorSide, convertValues, errorSpec, valueSpec, type ErrorSpec, type ValueSpec } from './convert.js';
import type { Binding, ColumnBinding, ErrorBinding } from './types.js';

interface NumericPlan {
  binding: ColumnBinding;
  quantity: NumericQuantity;
  spec: ValueSpec;
  errors: { binding: ErrorBinding; spec: ErrorSpec }[];
}

interface Plan {
  numeric: NumericPlan[];
  text: ColumnBinding[];
}

/** Units are parsed once per binding rather than per batch; weak, so a finished input's plan goes with it. */
const plans = new WeakMap<Binding, Plan>();

function planOf(binding: Binding): Plan {
  let p = plans.get(binding);
  if (p) return p;
  p = { numeric: [], text: [] };
  for (const b of binding.columns) {
    if (!isNumericQuantity(b.quantity)) {
      p.text.push(b);
      continue;
    }
    const q = b.quantity;
    p.numeric.push({
      binding: b,
      quantity: q,
      spec: valueSpec(q, b.unit, b.column),
      errors: b.errors.map((e) => ({ binding: e, spec: errorSpec(q, e.unit, e.column) })),
    });
  }
  plans.set(binding, p);
  return p;
}

/** The input-wide decimal-comma decision for a column, or null to decide per batch. */
function commaOf(binding: Binding, columnIndex: number): boolean | null {
  return binding.decimalCommas ? binding.decimalCommas.includes(columnIndex) : null;
}

function absInPlace(a: Float64Array): void {
  for (let i = 0; i < a.length; i++) if (a[i] < 0) a[i] = -a[i];
}

/**
 * Parse and convert one raw batch. Each bound column is read once into a typed array and converted
 * in a typed-array loop; problems are sparse, one entry per bad cell or malformed record.
 */
export function toBatch(raw: RawBatch, binding: Binding, input: number): Batch {
  const plan = planOf(binding);
  const n = raw.length;
  const problems: InputProblem[] = [];
  const quantities: Batch['quantities'] = {};
  const text: Batch['text'] = {};

  for (const b of plan.text) {
    const col = raw.columns[b.columnIndex];
    const values = col ? readText(col, n) : new Array<string | null>(n).fill(null);
    const tc: TextColumn = { column: b.column, values };
    text[b.quantity as TextQuantity] = tc;
  }

  for (const p of plan.numeric) {
    const col = raw.columns[p.binding.columnIndex];
    const rawValues = new Float64Array(n);
    if (col) readNumbers(col, p.binding.column, rawValues, problems, commaOf(binding, p.binding.columnIndex));
    else rawValues.fill(NaN);
    const value = new Float64Array(n);
    const isLum = p.quantity === 'luminosity';
    const log = isLum ? new Float64Array(n) : null;
    convertValues(rawValues, p.spec, value, log);

    let errLo: Float64Array | null = null;
    let errHi: Float64Array | null = null;
    let logErrLo: Float64Array | null = null;
    let logErrHi: Float64Array | null = null;
    const errColumns: string[] = [];
    let errRaw: WrittenErrors | undefined;
    for (const e of p.errors) {
      const ecol = raw.columns[e.binding.columnIndex];
      const a = new Float64Array(n);
      if (ecol) readNumbers(ecol, e.binding.column, a, problems, commaOf(binding, e.binding.columnIndex));
      else a.fill(NaN);
      // The cells as written, signs included, for the rules that judge the uncertainties themselves.
      errRaw ??= { lo: null, hi: null, loColumn: null, hiColumn: null, symmetric: e.binding.role === 'sym', loStoredNegative: false };
      const written = a.slice();
      if (e.binding.role !== 'hi') {
        errRaw.lo = written;
        errRaw.loColumn = e.binding.column;
        errRaw.loStoredNegative = e.binding.negativeStored;
      }
      if (e.binding.role !== 'lo') {
        errRaw.hi = written;
        errRaw.hiColumn = e.binding.column;
      }
      absInPlace(a);
      errColumns.push(e.binding.column);
      if (e.binding.role === 'sym' || e.binding.role === 'lo') {
        errLo = new Float64Array(n);
        logErrLo = isLum ? new Float64Array(n) : null;
        convertErrorSide(a, 'lo', p.spec, e.spec, value, errLo, logErrLo);
      }
      if (e.binding.role === 'sym' || e.binding.role === 'hi') {
        errHi = new Float64Array(n);
        logErrHi = isLum ? new Float64Array(n) : null;
        convertErrorSide(a, 'hi', p.spec, e.spec, value, errHi, logErrHi);
      }
    }

    const qc: QuantityColumn = { column: p.binding.column, unit: p.binding.unit, value, raw: rawValues, errLo, errHi, errColumns };
    if (errRaw) qc.errRaw = errRaw;
    if (log) {
      qc.log = log;
      qc.logErrLo = logErrLo;
      qc.logErrHi = logErrHi;
    }
    quantities[p.quantity] = qc;
  }

  for (const m of raw.malformed) {
    problems.push({
      index: m.index,
      kind: 'malformed',
      column: null,
      text: '',
      message: m.index < 0 && m.line !== null && !m.message.startsWith(`line ${m.line}:`) ? `line ${m.line}: ${m.message}` : m.message,
      line: m.line,
    });
  }
  problems.sort((a, b) => a.index - b.index);

  return { input, length: n, firstRow: raw.firstRow, lines: raw.lines, quantities, text, problems, unusable: {}, ...(binding.facts ? { facts: binding.facts } : {}) };
}
