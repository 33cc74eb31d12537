import type { NumericQuantity } from './quantities.js';
import type { Batch, QuantityColumn } from './types.js';

/** Marks a cell as unusable for the judging rules; screening rules call this. */
export function markUnusable(batch: Batch, q: NumericQuantity, index: number): void {
  let mask = batch.unusable[q];
  if (!mask) {
    mask = new Uint8Array(batch.length);
    batch.unusable[q] = mask;
  }
  mask[index] = 1;
}

/**
 * The value array of a quantity with unusable cells already NaN, so the judging loops test only
 * `Number.isFinite`. A copy is made only when some cell is marked.
 */
export function usableValues(batch: Batch, q: NumericQuantity): Float64Array | null {
  const col: QuantityColumn | undefined = batch.quantities[q];
  if (!col) return null;
  const mask = batch.unusable[q];
  if (!mask) return col.value;
  const out = col.value.slice();
  for (let i = 0; i < out.length; i++) if (mask[i]) out[i] = NaN;
  return out;
}

export function isUnusable(batch: Batch, q: NumericQuantity, index: number): boolean {
  const mask = batch.unusable[q];
  return mask !== undefined && mask[index] === 1;
}
