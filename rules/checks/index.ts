import type { Rule } from '../engine/types.js';
import { eddingtonLimit } from './eddington-limit.js';
import { luminosityUnitMixup } from './luminosity-unit-mixup.js';
import { malformedRow } from './malformed-row.js';
import { massLuminosityOutlier } from './mass-luminosity-outlier.js';
import { unparseableValue } from './unparseable-value.js';

/** Every rule, in the order they are listed and run within their stage. */
export const ALL_RULES: readonly Rule[] = [
  luminosityUnitMixup,
  eddingtonLimit,
  massLuminosityOutlier,
  unparseableValue,
  malformedRow,
];
