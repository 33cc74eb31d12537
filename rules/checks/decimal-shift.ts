import { fmt, round6, rowFinding } from '../engine/findings.js';
import { QUANTITY_INFO, type NumericQuantity } from '../engine/quantities.js';
import type { Rule } from '../engine/types.js';
import { starClasses } from '../physics/classify.js';
import { CELL_SYMBOL, Cell, ROW_FIT_PARAMS, ROW_RELATION_REFERENCES, RowInputs, RowRelations, relationNames } from './shared/row-relations.js';
import { LUMINOSITY_READINGS, MASS_READINGS, RADIUS_READINGS, TEFF_READINGS, readingLog, type UnitReading } from './shared/unit-readings.js';

const ID = 'decimal-shift';
const SHIFTS = [-1, 1, -2, 2, -3, 3] as const;
/**
 * A unit reading that fits within this many sigma of the best shift counts as fitting as well: a
 * factor of 1047.6 (Jupiter masses) and one of 1000 cannot be told apart by relations good to 0.1 dex.
 */
const UNIT_MARGIN_SIGMA = 0.5;

const CELLS: readonly { cell: Cell; q: NumericQuantity; readings: readonly UnitReading[]; unit: string }[] = [
  { cell: Cell.Mass, q: 'mass', readings: MASS_READINGS, unit: 'M_sun' },
  { cell: Cell.Radius, q: 'radius', readings: RADIUS_READINGS, unit: 'R_sun' },
  { cell: Cell.Luminosity, q: 'luminosity', readings: LUMINOSITY_READINGS, unit: 'L_sun' },
  { cell: Cell.Teff, q: 'teff', readings: TEFF_READINGS, unit: 'K' },
];

function times(s: number): string {
  const f = fmt(Math.pow(10, Math.abs(s)));
  return s > 0 ? `${f} times too small` : `${f} times too large`;
}

/**
 * A value off by 10, 100 or 1000 from what the rest of its row implies: the row breaks its
 * relations as written, and moving the decimal point of exactly one cell mends all of them.
 */
export const decimalShift: Rule = {
  meta: {
    id: ID,
    title: 'Value off by a power of ten from what its row implies',
    severity: 'warning',
    stage: 'judge',
    needs: [],
    uses: ['mass', 'radius', 'luminosity', 'teff', 'logg', 'stage', 'id'],
    params: ROW_FIT_PARAMS,
    references: ROW_RELATION_REFERENCES,
    doc: {
      catches:
        'A mass, radius, luminosity or Teff whose decimal point slipped by one to three places (a factor 10, 100 or 1000 either way), with the shifted value as the suggestion.',
      why:
        'A slipped decimal point leaves a plausible-looking number, so only the row can expose it: the relations that tie its values (L = 4 pi R^2 sigma Teff^4 within 0.15 dex, g = GM/R^2 within 0.1 dex plus the logg scatter of the input\'s first 16384 rows, and for main-sequence stars the mass-luminosity relation within its measured scatter, each with the row\'s errors) fail by more than fireSigma, and multiplying exactly one cell by 10^k (k = +-1, +-2, +-3) makes all of them hold within acceptSigma. When two different shifts would both mend the row, it cannot tell which cell slipped and stays silent (counted as ambiguous).',
      fires:
        'mass_Msun = 6.35 for a star with R = 14.3 R_sun and logg 3.89 (and L, Teff that fit Stefan-Boltzmann): g = GM/R^2 is 0.96 dex off; at 63.5 M_sun the row fits (warning; suggests 63.5).',
      silent:
        'A row 0.4 dex off Stefan-Boltzmann (grid Teff, a rapid rotator): within the scatter or mended by no power of ten. A radius 9.73 times too large is left to radius-unit-mixup (Jupiter radii), a mass 1047.6 times too large to mass-unit-mixup (Jupiter masses), a Teff 1000 times too small to temperature-unit-mixup (kK).',
      cautions:
        'The unit screens win wherever a unit factor lies within 0.05 dex of the power of ten (Jupiter masses vs 1000, Jupiter radii vs 10, Earth radii vs 100, kK vs K, g vs kg): they run first, and this rule also defers such shifts when they did not fire, so a radius ten times too large may be reported as Jupiter radii. Where a one-place shift fits clearly better than another unit, the unit screen still claims the cell if that unit is the column\'s habit (at least 10 rows and 2 % of those judged in the input\'s first 16384 rows), and this rule then stays silent on it. A row with only Stefan-Boltzmann cannot tell a radius off by 10 from a luminosity off by 100 and stays silent. logg and log-valued columns are not shifted. The mass-luminosity relation is used only for stars known to be on the main sequence, so giants are judged by Stefan-Boltzmann and gravity alone. A star that is really peculiar (a pre-main-sequence star, an inflated companion) can be mended by a power of ten by coincidence; the finding is a warning.',
    },
  },
  start(ctx) {
    const fire = ctx.params.fireSigma as number;
    const accept = ctx.params.acceptSigma as number;
    const rr = new RowRelations();
    // Index of each cell's declared unit among its readings (-1: none of them).
    const declared = CELLS.map((c) => {
      const unit = ctx.bound.get(c.q)?.unit ?? c.readings[0].unit;
      return c.readings.findIndex((r) => r.unit === unit);
    });
    let fired = 0;
    let ambiguous = 0;
    let deferred = 0;
    return {
      check(batch, out, stats) {
        const inputs = new RowInputs(batch, starClasses(batch));
        for (let i = 0; i < batch.length; i++) {
          inputs.load(rr, i);
          const bits = rr.available();
          if (bits === 0) {
            stats.skip('no relation can be evaluated (needs L, R and Teff, or M, R and logg, or M and L of a main-sequence star)');
            continue;
          }
          stats.checked++;
          const z0 = rr.worstZ(bits);
          if (!(z0 > fire)) continue;
          let best = -1;
          let bestShift = 0;
          let bestZ = Infinity;
          let fits = 0;
          let deferredHere = false;
          for (let c = 0; c < CELLS.length; c++) {
            const { cell, q } = CELLS[c];
            const x = rr.get(cell);
            const col = batch.quantities[q];
            if (!Number.isFinite(x) || !col || col.unit.startsWith('log') || !rr.pins(cell, bits, accept)) continue;
            // The best the cell's other units do: a unit that mends the row as well as a shift
            // explains it better (Jupiter masses are 1047.6, not 1000; a log L is no shift at all).
            let unitZ = Infinity;
            const readings = CELLS[c].readings;
            for (let k = 0; k < readings.length; k++) {
              if (k === declared[c]) continue;
              const lg = readingLog(readings[k], col.raw[i]);
              if (Number.isFinite(lg)) unitZ = Math.min(unitZ, rr.worstZWith(cell, lg, bits));
            }
            for (const s of SHIFTS) {
              const z = rr.worstZWith(cell, x + s, bits);
              if (!(z <= accept)) continue;
              if (unitZ <= accept && unitZ <= z + UNIT_MARGIN_SIGMA) {
                deferredHere = true;
                continue;
              }
              fits++;
              if (z < bestZ) {
                bestZ = z;
                best = c;
                bestShift = s;
              }
            }
          }
          if (deferredHere) {
            deferred++;
            continue;
          }
          if (best < 0) continue;
          if (fits > 1) {
            ambiguous++;
            continue;
          }
          fired++;
          const { cell, q, unit } = CELLS[best];
          const col = batch.quantities[q]!;
          const written = col.raw[i];
          const shifted = written * Math.pow(10, bestShift);
          const implied = rr.expectedFor(cell);
          out.push(
            rowFinding(batch, i, {
              rule: ID,
              severity: 'warning',
              columns: [col.column],
              values: { [col.column]: round6(written), shiftDex: bestShift, sigmaAsWritten: round6(z0), sigmaShifted: round6(bestZ), relations: relationNames(bits) },
              expected: { value: round6(Math.pow(10, Number.isFinite(implied) ? implied : rr.get(cell) + bestShift)) ?? undefined, unit: QUANTITY_INFO[q].unit },
              message: `${col.column} = ${fmt(written)} looks ${times(bestShift)} (a slipped decimal point?): as written the row misses ${relationNames(rr.failing(bits, fire))} by ${fmt(z0, 2)} sigma${Number.isFinite(implied) ? `, and its other values imply ${CELL_SYMBOL[cell]} = ${fmt(implied, 3)}` : ''}; with ${fmt(shifted)} it fits within ${fmt(bestZ, 2)} sigma`,
              suggestion: { column: col.column, value: round6(shifted) ?? shifted, unit: col.unit || unit, text: `${fmt(shifted)} (the value x 10^${bestShift})` },
            }),
          );
        }
      },
      summary() {
        return { rowsShifted: fired, rowsAmbiguous: ambiguous, rowsLeftToUnitRules: deferred };
      },
      // Only counts cross batches; every finding is made in `check`.
      save() {
        return { fired, ambiguous, deferred };
      },
      absorb(state) {
        const s = state as { fired: number; ambiguous: number; deferred: number };
        fired += s.fired;
        ambiguous += s.ambiguous;
        deferred += s.deferred;
      },
    };
  },
};
