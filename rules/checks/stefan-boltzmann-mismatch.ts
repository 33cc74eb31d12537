import { expectedExceedances } from '../physics/statistics.js';
import { COLUMN_VERDICT_MIN_ROWS, columnFinding, fmt, round6, rowFinding } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Finding, Rule, Severity } from '../engine/types.js';
import { L_SUN_W, TEFF_SUN_K } from '../physics/constants.js';
import { OffsetJudge, dexAbove, dexBelow, errAt, movedFinding, overflowNote, type OffsetJudgeState } from '../physics/consistency.js';
import { logLuminosityFromRadiusTeff } from '../physics/stellar.js';

const ID = 'stefan-boltzmann-mismatch';
/** A column median closer to zero than this (dex) is not worth a note. */
const MIN_OFFSET_DEX = 0.005;

/** The numbers of one judged row that a finding is written from. */
interface SbRow {
  logL: number;
  /** log L from R and Teff. */
  expected: number;
  residual: number;
  sigma: number;
  radius: number;
  teff: number;
}

/** A row held until the column offset is known: its finding so far and the numbers of its verdict. */
interface SbHeld {
  base: Finding;
  row: SbRow;
  radiusColumn: string;
  teffColumn: string;
}

/** What a run over a row range hands on (see RuleRun.save). */
interface SbState {
  judge: OffsetJudgeState;
  input: number;
  lumColumn: string;
  lumUnit: string;
  flagged: number;
}

export const stefanBoltzmannMismatch: Rule = {
  meta: {
    id: ID,
    title: 'Luminosity disagrees with 4 pi R^2 sigma Teff^4',
    severity: 'warning',
    stage: 'judge',
    needs: ['luminosity', 'radius', 'teff'],
    uses: ['id'],
    params: [
      {
        name: 'toleranceDex',
        type: 'number',
        default: 0.1,
        min: 0,
        description:
          'Model tolerance in dex added in quadrature to the propagated errors: rapid rotators, grid-quantised Teff, radii from other relations.',
      },
      { name: 'sigmas', type: 'number', default: 3, min: 0.5, description: 'Residual, in combined sigma, beyond which a row is flagged.' },
      {
        name: 'errorDex',
        type: 'number',
        default: 1,
        min: 0,
        description: 'A flagged row more than this many dex off (a factor of 10 for the default) is an error, not a warning.',
      },
      {
        name: 'maxOffsetDex',
        type: 'number',
        default: 0.05,
        min: 0,
        description: 'Largest whole-column zero-point offset that is reported once for the column and corrected for before rows are judged.',
      },
    ],
    references: [
      { cite: 'IAU 2015 Resolution B3 (nominal R_sun, Teff_sun = 5772 K, L_sun)', note: 'L/L_sun = (R/R_sun)^2 (Teff/5772 K)^4 holds to 2.4e-6 with the nominal values' },
      { cite: 'CODATA 2018 (Stefan-Boltzmann constant)' },
      { cite: 'Yoon et al. 2010, ApJ 708, 71 (Vega, a pole-on rapid rotator: no single R or Teff)' },
      { cite: 'Healy et al. 2024, arXiv:2307.08785 (red-supergiant list whose log L sits 0.021 dex off R^2 Teff^4 on every row)' },
    ],
    doc: {
      catches:
        'Rows whose log L disagrees with log[(R/R_sun)^2 (Teff/5772 K)^4] by more than the propagated errors and a tolerance allow; a whole-column zero-point offset (an older solar Teff or L_sun) is reported once for the column instead of on every row.',
      why:
        'A star radiating as a blackbody of radius R and effective temperature Teff has L = 4 pi R^2 sigma Teff^4, which is how Teff is defined. Catalogs that list all three must satisfy it; a miss of tenths of a dex or more means one of L, R or Teff is wrong (a mistyped digit, a radius from another source, a luminosity in another unit or with a dropped sign). The residual is judged over sqrt(s_logL^2 + (2 s_logR)^2 + (4 s_logTeff)^2 + tolerance^2), each error taken on the side that faces the expectation, so asymmetric errors count where they matter.',
      fires:
        'log L = 0.531 for R = 0.20 R_sun and Teff = 3100 K (TOI-2406 in the PHL compilation): R^2 T^4 gives log L = -2.48, 3.0 dex away (error; R = 6.39 R_sun, Teff = 17 520 K or L = 0.0033 L_sun would fit).',
      silent:
        'Sirius A, L = 24.7 +- 0.7 L_sun, R = 1.713 R_sun, Teff = 9845 K: R^2 T^4 gives 24.84 L_sun, 0.002 dex away. The red-supergiant list whose log L sits 0.0213 dex above R^2 T^4 on all 640 rows gets one column note and no row findings.',
      cautions:
        'The default 0.1 dex tolerance (with 3 sigma, a row without errors may be off by up to 0.3 dex, a factor of 2 in L) is a measured compromise, not physics: rapid rotators such as Vega miss by up to 0.18 dex with published parameters, and Teff on a 100 K model grid spreads M dwarfs by up to 0.5 dex. Measured with the defaults: 0.53 % of judged CARMENES rows (9 of 1698) and 1.5 % of PHL rows (75 of 5035) flagged, of which none and 0.10 % (5) are errors (over 1 dex); a 0.05 dex tolerance would flag 5 % and 3 %, 0.15 dex 0.1 % and 0.9 %. A tighter tolerance finds subtler problems and flags real rapid rotators, spotted or inflated young stars and unresolved binaries. A column offset is corrected only when three quarters of the rows share its sign and it is at most maxOffsetDex; larger shifts are judged row by row.',
    },
  },
  start(ctx) {
    const tol = ctx.params.toleranceDex as number;
    const k = ctx.params.sigmas as number;
    const errorDex = ctx.params.errorDex as number;
    const maxOffset = ctx.params.maxOffsetDex as number;
    let input = 0;
    let lumColumn = '';
    let lumUnit = 'solLum';
    let flagged = 0;

    /** The finding for a row judged against the relation shifted by `off`, or null when it passes. */
    const judge = (base: Finding, row: SbRow, off: number, radiusColumn: string, teffColumn: string): Finding | null => {
      const dev = row.residual - off;
      const allowed = k * row.sigma;
      if (Math.abs(dev) <= allowed) return null;
      flagged++;
      const expLog = row.expected + off;
      const side = dev > 0 ? 'above' : 'below';
      const severity: Severity = Math.abs(dev) > errorDex ? 'error' : 'warning';
      // What would make the row consistent if only one of its columns were wrong.
      const lFit = Math.pow(10, expLog);
      const rFit = row.radius * Math.pow(10, dev / 2);
      const tFit = row.teff * Math.pow(10, dev / 4);
      const shifted = off !== 0 ? `, shifted by the column's ${fmt(off, 3)} dex offset` : '';
      const logDeclared = lumUnit.startsWith('log');
      base.severity = severity;
      base.values = {
        ...base.values,
        logL: round6(row.logL),
        expectedLogL: round6(expLog),
        residualDex: round6(dev),
        sigmaDex: round6(row.sigma),
        z: round6(dev / row.sigma),
        ...(off !== 0 ? { columnOffsetDex: round6(off) } : {}),
      };
      base.expected = {
        value: round6(lFit) ?? undefined,
        min: round6(Math.pow(10, expLog - allowed)) ?? undefined,
        max: round6(Math.pow(10, expLog + allowed)) ?? undefined,
        unit: 'solLum',
      };
      base.message =
        `log L = ${fmt(row.logL, 3)} is ${fmt(Math.abs(dev), 2)} dex ${side} what R = ${fmt(row.radius)} R_sun and Teff = ${fmt(row.teff)} K give ` +
        `(log L = ${fmt(expLog, 3)} from L = R^2 (Teff/5772 K)^4${shifted}); ${fmt(Math.abs(dev) / row.sigma, 2)} sigma with sigma = ${fmt(row.sigma, 2)} dex. ` +
        `One of L, R, Teff is wrong: L = ${fmt(lFit)} L_sun, R = ${fmt(rFit)} R_sun or Teff = ${fmt(tFit)} K would fit`;
      base.suggestion = {
        column: lumColumn,
        value: round6(logDeclared ? expLog : lFit) ?? lFit,
        unit: logDeclared ? 'log(solLum)' : 'solLum',
        text: `L = ${fmt(lFit)} L_sun if R and Teff are right (else R = ${fmt(rFit)} R_sun in ${radiusColumn}, or Teff = ${fmt(tFit)} K in ${teffColumn})`,
      };
      return base;
    };
    const judgeRows = new OffsetJudge<SbHeld>(0.5, 1e-4, MIN_OFFSET_DEX, maxOffset, COLUMN_VERDICT_MIN_ROWS, {
      build: (h, off) => judge(h.base, h.row, off, h.radiusColumn, h.teffColumn),
      move: (h, shift) => ({ ...h, base: movedFinding(h.base, shift) }),
    }, ctx.spill);

    return {
      check(batch, out, stats) {
        input = batch.input;
        const lum = batch.quantities.luminosity!;
        const rad = batch.quantities.radius!;
        const te = batch.quantities.teff!;
        lumColumn = lum.column;
        lumUnit = lum.unit;
        const l = usableValues(batch, 'luminosity')!;
        const r = usableValues(batch, 'radius')!;
        const t = usableValues(batch, 'teff')!;
        const logL = lum.log!;
        const lLo = lum.logErrLo ?? null;
        const lHi = lum.logErrHi ?? null;
        for (let i = 0; i < batch.length; i++) {
          const li = l[i];
          const ri = r[i];
          const ti = t[i];
          if (!(li > 0)) {
            stats.skip(Number.isFinite(li) ? 'luminosity not positive' : 'luminosity missing or unusable');
            continue;
          }
          if (!(ri > 0) || !(ti > 0)) {
            stats.skip(Number.isFinite(ri) && Number.isFinite(ti) ? 'radius or Teff not positive' : 'radius or Teff missing or unusable');
            continue;
          }
          stats.checked++;
          const expected = logLuminosityFromRadiusTeff(ri, ti);
          const residual = logL[i] - expected;
          // Each error on the side that moves the row toward the expectation.
          const up = residual > 0;
          const sL = errAt(up ? lLo : lHi, i);
          const sR = up ? dexAbove(ri, errAt(rad.errHi, i)) : dexBelow(ri, errAt(rad.errLo, i));
          const sT = up ? dexAbove(ti, errAt(te.errHi, i)) : dexBelow(ti, errAt(te.errLo, i));
          const sigma = Math.sqrt(sL * sL + 4 * sR * sR + 16 * sT * sT + tol * tol);
          if (!judgeRows.consider(residual, k * sigma)) continue;
          const row: SbRow = { logL: logL[i], expected, residual, sigma, radius: ri, teff: ti };
          const base = rowFinding(batch, i, {
            rule: ID,
            severity: 'warning',
            columns: [lum.column, rad.column, te.column],
            values: { [lum.column]: round6(lum.raw[i]), [rad.column]: round6(rad.raw[i]), [te.column]: round6(te.raw[i]) },
            message: '',
          });
          judgeRows.route(residual, k * sigma, out, { base, row, radiusColumn: rad.column, teffColumn: te.column });
        }
      },
      finish(out) {
        const off = judgeRows.settle(out);
        if (off !== 0) {
          const teffSun = TEFF_SUN_K * Math.pow(10, -off / 4);
          const lSun = L_SUN_W * Math.pow(10, -off);
          out.push(
            columnFinding({
              input,
              rule: ID,
              severity: 'note',
              columns: [lumColumn],
              values: { rowsJudged: judgeRows.tally.n, medianOffsetDex: round6(off), equivalentTeffSunK: round6(teffSun), equivalentLSunW: round6(lSun) },
              expected: { value: 0, unit: 'dex' },
              message:
                `log L in ${lumColumn} sits ${fmt(Math.abs(off), 3)} dex ${off > 0 ? 'above' : 'below'} R^2 (Teff/5772 K)^4 for the median of ${judgeRows.tally.n} rows, ` +
                `and three quarters of the rows share the sign: a zero-point convention of the whole column, not an error per row. ` +
                `Likely an older solar Teff or L_sun (the offset is what Teff_sun = ${fmt(teffSun)} K or L_sun = ${fmt(lSun)} W would give), ` +
                `or radii derived from L and Teff with other solar constants. Rows near the threshold were judged against the relation shifted by this offset`,
              suggestion: {
                column: lumColumn,
                value: round6(-off) ?? -off,
                unit: 'dex',
                text: `state the solar constants behind ${lumColumn}; adding ${fmt(-off, 3)} dex to log L puts it on the IAU 2015 nominal scale of R and Teff`,
              },
            }),
          );
        }
        const overflow = overflowNote(input, ID, [lumColumn], judgeRows.held.dropped, `of ${lumColumn} were close to the threshold`);
        if (overflow) out.push(overflow);
      },
      save(): SbState {
        return { judge: judgeRows.save(), input, lumColumn, lumUnit, flagged };
      },
      absorb(state, shift) {
        const s = state as SbState;
        judgeRows.absorb(s.judge, shift);
        flagged += s.flagged;
        // Empty until a range sees a batch; the binding is one per input, so any range's will do.
        if (s.lumColumn) {
          input = s.input;
          lumColumn = s.lumColumn;
          lumUnit = s.lumUnit;
        }
      },
      summary() {
        return {
          toleranceDex: tol,
          sigmas: k,
          rowsJudged: judgeRows.tally.n,
          medianResidualDex: round6(judgeRows.tally.quantile(0.5)),
          columnOffsetDex: Number.isFinite(judgeRows.offset) ? round6(judgeRows.offset) : null,
          rowsFlagged: flagged,
          // Two-sided |residual| > k sigma over the judged rows, were the residuals Gaussian.
          expectedByChance: round6(expectedExceedances(k, judgeRows.tally.n, 0)),
          observed: flagged,
        };
      },
    };
  },
};
