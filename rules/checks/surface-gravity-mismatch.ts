import { expectedExceedances } from '../physics/statistics.js';
import { COLUMN_VERDICT_MIN_ROWS, columnFinding, fmt, round6, rowFinding } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Finding, Rule } from '../engine/types.js';
import { DEFERRED_CAP, DeferredFindings, FINISHED, dexAbove, dexBelow, errAt, overflowNote, type DeferredState } from '../physics/consistency.js';
import { loggFromMassRadius } from '../physics/stellar.js';

const ID = 'surface-gravity-mismatch';
/** log10(100): a logg in m s^-2 is this much below the same gravity in cm s^-2. */
const SI_DEX = 2;
/** The 2 dex match must also be close in absolute terms: at most this far from exactly 2 dex. */
const SI_WINDOW_MAX = 0.3;
/**
 * A 2 dex match is decisive, and the row an error, only when the combined sigma is at most this:
 * then the window is at most 0.3 dex and a loose (model-grid) logg cannot produce it by chance.
 */
const DECISIVE_SIGMA = 0.15;
/** Above this fraction of judged rows sitting 2 dex off, the column as a whole is in the other unit. */
const COLUMN_FRACTION = 0.5;
/** Share of logg values on a 0.25 dex grid above which the column is called grid-quantised. */
const GRID_FRACTION = 0.95;

/** Deferred-finding tags: rows that look like SI (2 dex low) or like cgs read as SI (2 dex high). */
const TAG_LOW = 0;
const TAG_HIGH = 1;

function onGrid(v: number, step: number): boolean {
  const q = v / step;
  return Math.abs(q - Math.round(q)) < 1e-6;
}

/** What a run over a row range hands on (see RuleRun.save). */
interface RangeTotals {
  deferred: DeferredState;
  input: number;
  column: string;
  judged: number;
  flagged: number;
  loggSeen: number;
  onQuarterGrid: number;
  onHalfGrid: number;
  statedErrSum: number;
  statedErrN: number;
}

export const surfaceGravityMismatch: Rule = {
  meta: {
    id: ID,
    title: 'logg disagrees with G M / R^2',
    severity: 'warning',
    stage: 'judge',
    needs: ['logg', 'mass', 'radius'],
    uses: ['id'],
    params: [
      { name: 'sigmas', type: 'number', default: 3, min: 0.5, description: 'Residual, in combined sigma, beyond which a row is flagged.' },
      {
        name: 'toleranceDex',
        type: 'number',
        default: 0.05,
        min: 0,
        description: 'Tolerance in dex added in quadrature: rounding of quoted logg and solar-constant conventions.',
      },
      {
        name: 'defaultErrorDex',
        type: 'number',
        default: 0.1,
        min: 0,
        description: 'Uncertainty of logg where the catalog gives none (typical of spectroscopic logg).',
      },
    ],
    references: [
      { cite: 'IAU 2015 Resolution B3 (nominal (GM)_sun, R_sun): logg_sun = 4.438068 (cgs)' },
      { cite: 'Bond et al. 2017, ApJ 840, 70 (Sirius A: quoted logg 4.33 against 4.285 from M and R)' },
      { cite: 'Cifuentes et al. 2025, arXiv:2412.12264 (CARMENES: model-grid logg on a 0.5 dex grid, error 0.25)' },
    ],
    doc: {
      catches:
        'Rows whose logg disagrees with logg = 4.438068 + log(M/M_sun) - 2 log(R/R_sun) (cgs) beyond the propagated errors; names cgs vs SI when the difference is almost exactly 2 dex, and notes a logg column quantised on a model grid.',
      why:
        'Surface gravity is g = G M / R^2, so a catalog that lists M, R and logg lists one of them twice. A difference of a few tenths of a dex or more means a wrong mass (a dropped digit), a wrong radius, a poorly constrained spectroscopic or model-grid logg, or gravity in m s^-2 (2 dex below cgs). The difference is judged over sqrt(s_logg^2 + s_logM^2 + (2 s_logR)^2 + tolerance^2), each error on the side facing the expectation. White dwarfs (logg about 8) are judged like any star: the formula holds for them.',
      fires:
        'M = 1.0 M_sun, R = 1.0 R_sun, logg = 2.44: G M / R^2 gives 4.44, and the row is 2.00 dex low, what logg in m s^-2 would give (suggests 4.44).',
      silent:
        'Sirius A: M = 2.063, R = 1.713, quoted logg 4.33 +- 0.1 against 4.285 from M and R, 0.45 sigma. A white-dwarf table without mass or radius is not judged at all (the rule reports it as not run).',
      cautions:
        'Spectroscopic logg is often good to only 0.1-0.2 dex, and model-grid logg (SED fits) barely constrains gravity: CARMENES quotes 0.5 dex steps with a flat 0.25 error, and even judged with that error 25 % of its judged rows (429 of 1698) disagree with M and R (all warnings, with one note on the grid). PHL (no logg errors) and the NASA composite table give 0.7 % and 0.6 % warnings, no errors. Where no error is given, defaultErrorDex (0.1) is assumed. A 2 dex difference is named as cgs vs SI only within 2 sigma and 0.3 dex of exactly 2 dex; with a loose logg error that reading is a possibility, not a proof. Row findings are warnings, except a 2 dex match with a combined sigma of at most 0.15 dex (an error); a column where most rows sit 2 dex off gets one error for the whole column instead of one per row.',
    },
  },
  start(ctx) {
    const k = ctx.params.sigmas as number;
    const tol = ctx.params.toleranceDex as number;
    const defaultErr = ctx.params.defaultErrorDex as number;
    const deferred = new DeferredFindings<Finding>(DEFERRED_CAP, FINISHED, ctx.spill);
    let input = 0;
    let column = '';
    let judged = 0;
    let flagged = 0;
    let loggSeen = 0;
    let onQuarterGrid = 0;
    let onHalfGrid = 0;
    let statedErrSum = 0;
    let statedErrN = 0;
    let columnVerdict = '';

    return {
      check(batch, out, stats) {
        input = batch.input;
        const lg = batch.quantities.logg!;
        const mass = batch.quantities.mass!;
        const rad = batch.quantities.radius!;
        column = lg.column;
        const g = usableValues(batch, 'logg')!;
        const m = usableValues(batch, 'mass')!;
        const r = usableValues(batch, 'radius')!;
        for (let i = 0; i < batch.length; i++) {
          const gi = g[i];
          const mi = m[i];
          const ri = r[i];
          if (!Number.isFinite(gi)) {
            stats.skip('logg missing or unusable');
            continue;
          }
          loggSeen++;
          if (onGrid(lg.raw[i], 0.25)) onQuarterGrid++;
          if (onGrid(lg.raw[i], 0.5)) onHalfGrid++;
          if (!(mi > 0) || !(ri > 0)) {
            stats.skip(Number.isFinite(mi) && Number.isFinite(ri) ? 'mass or radius not positive' : 'mass or radius missing or unusable');
            continue;
          }
          stats.checked++;
          judged++;
          const expected = loggFromMassRadius(mi, ri);
          const diff = gi - expected;
          // Errors on the side facing the expectation: a quoted logg above G M / R^2 moves down by
          // its lower error, and G M / R^2 moves up with more mass or less radius.
          const up = diff > 0;
          const stated = up ? (lg.errLo ? lg.errLo[i] : NaN) : lg.errHi ? lg.errHi[i] : NaN;
          const sG = stated >= 0 ? stated : defaultErr;
          if (stated >= 0) {
            statedErrSum += stated;
            statedErrN++;
          }
          const sM = up ? dexAbove(mi, errAt(mass.errHi, i)) : dexBelow(mi, errAt(mass.errLo, i));
          const sR = up ? dexBelow(ri, errAt(rad.errLo, i)) : dexAbove(ri, errAt(rad.errHi, i));
          const sigma = Math.sqrt(sG * sG + sM * sM + 4 * sR * sR + tol * tol);
          const allowed = k * sigma;
          if (Math.abs(diff) <= allowed) continue;
          flagged++;
          // cgs vs SI: the row sits almost exactly 2 dex off, within its errors.
          const window = Math.min(2 * sigma, SI_WINDOW_MAX);
          const low = Math.abs(diff + SI_DEX) <= window;
          const high = !low && Math.abs(diff - SI_DEX) <= window;
          const values = {
            [lg.column]: round6(lg.raw[i]),
            [mass.column]: round6(mass.raw[i]),
            [rad.column]: round6(rad.raw[i]),
            expectedLogg: round6(expected),
            residualDex: round6(diff),
            sigmaDex: round6(sigma),
            z: round6(diff / sigma),
          };
          const expectedRange = { value: round6(expected) ?? undefined, min: round6(expected - allowed) ?? undefined, max: round6(expected + allowed) ?? undefined, unit: 'log(cm.s-2)' };
          const basis = `G M / R^2 from M = ${fmt(mi)} M_sun and R = ${fmt(ri)} R_sun gives logg = ${fmt(expected, 3)} (cgs)`;
          const zText = `${fmt(Math.abs(diff) / sigma, 2)} sigma with sigma = ${fmt(sigma, 2)} dex`;
          if (low || high) {
            const f = rowFinding(batch, i, {
              rule: ID,
              severity: sigma <= DECISIVE_SIGMA ? 'error' : 'warning',
              columns: [lg.column, mass.column, rad.column],
              values: { ...values, likelyUnit: low ? 'log(m.s-2)' : 'log(cm.s-2) read as log(m.s-2)' },
              expected: expectedRange,
              message: low
                ? `logg = ${fmt(gi, 3)} is ${fmt(-diff, 3)} dex below what ${basis}: almost exactly the 2 dex of a gravity in m s^-2 rather than cm s^-2 (${zText}); in cgs it would be ${fmt(gi + SI_DEX, 3)}`
                : `logg = ${fmt(gi, 3)} is ${fmt(diff, 3)} dex above what ${basis}: almost exactly 2 dex, as when a cgs logg is read as m s^-2 (${zText}); the value as written would be ${fmt(gi - SI_DEX, 3)} in cgs`,
              suggestion: {
                column: lg.column,
                value: round6(low ? gi + SI_DEX : gi - SI_DEX) ?? gi,
                unit: 'log(cm.s-2)',
                text: low ? `${fmt(gi + SI_DEX, 3)} (the value read as log g in m s^-2, converted to cgs)` : `${fmt(gi - SI_DEX, 3)} (the value read as cgs)`,
              },
            });
            deferred.push(low ? TAG_LOW : TAG_HIGH, f);
            continue;
          }
          // What would make the row consistent if only one of its columns were wrong.
          const mFit = mi * Math.pow(10, diff);
          const rFit = ri * Math.pow(10, -diff / 2);
          out.push(
            rowFinding(batch, i, {
              rule: ID,
              severity: 'warning',
              columns: [lg.column, mass.column, rad.column],
              values,
              expected: expectedRange,
              message: `logg = ${fmt(gi, 3)} is ${fmt(Math.abs(diff), 2)} dex ${up ? 'above' : 'below'} what ${basis} (${zText}); logg, M or R is wrong: M = ${fmt(mFit)} M_sun or R = ${fmt(rFit)} R_sun would fit`,
              suggestion: {
                column: lg.column,
                value: round6(expected) ?? expected,
                unit: 'log(cm.s-2)',
                text: `logg = ${fmt(expected, 3)} if M and R are right (else M = ${fmt(mFit)} M_sun in ${mass.column}, or R = ${fmt(rFit)} R_sun in ${rad.column})`,
              },
            }),
          );
        }
      },
      finish(out) {
        const low = deferred.count(TAG_LOW);
        const high = deferred.count(TAG_HIGH);
        const top = low >= high ? TAG_LOW : TAG_HIGH;
        const topCount = Math.max(low, high);
        if (judged >= COLUMN_VERDICT_MIN_ROWS && topCount / judged > COLUMN_FRACTION) {
          columnVerdict = top === TAG_LOW ? 'log(m.s-2)' : 'log(cm.s-2)';
          out.push(
            columnFinding({
              input,
              rule: ID,
              severity: 'error',
              columns: [column],
              values: { rowsJudged: judged, rowsTwoDexOff: topCount, likelyUnit: columnVerdict },
              message:
                top === TAG_LOW
                  ? `${topCount} of ${judged} judged rows of ${column} sit 2 dex below G M / R^2: the column is likely log g in m s^-2 (SI), not cgs`
                  : `${topCount} of ${judged} judged rows of ${column} sit 2 dex above G M / R^2: the column is likely log g in cm s^-2 (cgs) but was read as SI`,
              suggestion: {
                column,
                value: top === TAG_LOW ? SI_DEX : -SI_DEX,
                unit: 'dex',
                text: top === TAG_LOW ? `declare the unit as log(m.s-2) (e.g. --unit ${column}=log(m.s-2)), which adds 2 dex` : `declare the unit as log(cm.s-2) (e.g. --unit ${column}=log(cm.s-2))`,
              },
            }),
          );
        }
        deferred.flush(out, 0, columnVerdict ? top : -1);
        const gridStep = loggSeen >= COLUMN_VERDICT_MIN_ROWS && onHalfGrid / loggSeen >= GRID_FRACTION ? 0.5 : loggSeen >= COLUMN_VERDICT_MIN_ROWS && onQuarterGrid / loggSeen >= GRID_FRACTION ? 0.25 : 0;
        if (gridStep > 0 && flagged > 0) {
          const meanErr = statedErrN > 0 ? statedErrSum / statedErrN : NaN;
          out.push(
            columnFinding({
              input,
              rule: ID,
              severity: 'note',
              columns: [column],
              values: { gridStepDex: gridStep, rowsOnGrid: gridStep === 0.5 ? onHalfGrid : onQuarterGrid, rowsWithLogg: loggSeen, rowsFlagged: flagged, meanStatedErrorDex: round6(meanErr) },
              message:
                `${column} takes values on a ${gridStep} dex grid only, as a model-grid fit does: such a logg barely constrains gravity. ` +
                `It was judged with its ${Number.isFinite(meanErr) ? `stated error (mean ${fmt(meanErr, 2)} dex)` : `default error of ${defaultErr} dex`}, and ${flagged} of ${judged} judged rows still disagree with G M / R^2`,
              suggestion: null,
            }),
          );
        }
        const overflow = overflowNote(input, ID, [column], deferred.dropped, `of ${column} sit 2 dex off G M / R^2`);
        if (overflow) out.push(overflow);
      },
      save(): RangeTotals {
        return { deferred: deferred.save(), input, column, judged, flagged, loggSeen, onQuarterGrid, onHalfGrid, statedErrSum, statedErrN };
      },
      absorb(state, shift) {
        const s = state as RangeTotals;
        deferred.absorb(s.deferred, shift);
        judged += s.judged;
        flagged += s.flagged;
        loggSeen += s.loggSeen;
        onQuarterGrid += s.onQuarterGrid;
        onHalfGrid += s.onHalfGrid;
        statedErrSum += s.statedErrSum;
        statedErrN += s.statedErrN;
        // Empty until a range sees a batch; the binding is one per input, so any range's will do.
        if (s.column) {
          input = s.input;
          column = s.column;
        }
      },
      summary() {
        return {
          sigmas: k,
          toleranceDex: tol,
          defaultErrorDex: defaultErr,
          rowsJudged: judged,
          rowsFlagged: flagged,
          columnUnitVerdict: columnVerdict || null,
          // Two-sided |residual| > k sigma over the judged rows, were the residuals Gaussian.
          expectedByChance: round6(expectedExceedances(k, judged, 0)),
          observed: flagged,
        };
      },
    };
  },
};

