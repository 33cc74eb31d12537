import type { Rule, SampleFact } from '../engine/types.js';
import { GRAVITY_SCATTER } from './shared/row-relations.js';
import { eddingtonLimit } from './eddington-limit.js';
import { luminosityUnitMixup } from './luminosity-unit-mixup.js';
import { sentinelValue } from './sentinel-value.js';
import { valueOutOfRange } from './value-out-of-range.js';
import { uncertaintyInvalid } from './uncertainty-invalid.js';
import { duplicateId } from './duplicate-id.js';
import { duplicateRow } from './duplicate-row.js';
import { conflictingDuplicate } from './conflicting-duplicate.js';
import { swappedColumns } from './swapped-columns.js';
import { decimalShift } from './decimal-shift.js';
import { gravityUnitMixup } from './gravity-unit-mixup.js';
import { temperatureUnitMixup } from './temperature-unit-mixup.js';
import { massUnitMixup } from './mass-unit-mixup.js';
import { radiusUnitMixup } from './radius-unit-mixup.js';
import { malformedRow } from './malformed-row.js';
import { massLuminosityOutlier } from './mass-luminosity-outlier.js';
import { unparseableValue } from './unparseable-value.js';
import { stefanBoltzmannMismatch } from './stefan-boltzmann-mismatch.js';
import { surfaceGravityMismatch } from './surface-gravity-mismatch.js';
import { bolometricMagnitudeMismatch } from './bolometric-magnitude-mismatch.js';
import { parallaxDistanceMismatch } from './parallax-distance-mismatch.js';

/** Every rule, in the order they are listed and run within their stage. */
export const ALL_RULES: readonly Rule[] = [
  sentinelValue,
  luminosityUnitMixup,
  swappedColumns,
  gravityUnitMixup,
  temperatureUnitMixup,
  massUnitMixup,
  radiusUnitMixup,
  decimalShift,
  eddingtonLimit,
  massLuminosityOutlier,
  stefanBoltzmannMismatch,
  surfaceGravityMismatch,
  bolometricMagnitudeMismatch,
  parallaxDistanceMismatch,
  unparseableValue,
  malformedRow,
  valueOutOfRange,
  uncertaintyInvalid,
  duplicateId,
  duplicateRow,
  conflictingDuplicate,
];

/** What the command line measures on each input's first rows for the rules (Batch.facts). */
export const SAMPLE_FACTS: readonly SampleFact[] = [GRAVITY_SCATTER];
