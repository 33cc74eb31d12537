import { expectedExceedances } from '../physics/statistics.js';
import { COLUMN_VERDICT_MIN_ROWS, columnFinding, fmt, round6, rowFinding } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Finding, Rule, Severity } from '../engine/types.js';
import { MBOL_SUN } from '../physics/constants.js';
import { OffsetJudge, errAt, movedFinding, overflowNote, type OffsetJudgeState } from '../physics/consistency.js';

const ID = 'bolometric-magnitude-mismatch';
/** A column median closer to zero than this (mag) is not worth a note. */
const MIN_OFFSET_MAG = 0.005;
/** A measured offset is put down to a known zero point when within this of it (mag). */
const ZERO_POINT_MATCH_MAG = 0.0025;

/** Solar bolometric magnitudes met in catalogs, against which a column offset is named. */
export const OLDER_ZERO_POINTS: readonly { mbolSun: number; source: string }[] = [
  { mbolSun: 4.75, source: 'IAU Commissions 25/36 proposal of 1999 and Allen, L_0 = 3.055e28 W' },
  { mbolSun: 4.7554, source: "Mamajek's 2012 solar table" },
  { mbolSun: 4.72, source: 'the mean G2V row of older calibration tables' },
  { mbolSun: 4.8, source: 'older compilations, e.g. the red-supergiant list of Healy et al. 2024' },
];

/** The numbers of one judged row that a finding is written from. */
interface MbolRow {
  mbol: number;
  logL: number;
  /** M_bol from L on the IAU 2015 B2 scale. */
  expected: number;
  residual: number;
  sigma: number;
}

/** A row held until the column offset is known: its finding so far and the numbers of its verdict. */
interface MbolHeld {
  base: Finding;
  row: MbolRow;
}

/** What a run over a row range hands on (see RuleRun.save). */
interface MbolState {
  judge: OffsetJudgeState;
  input: number;
  column: string;
  flagged: number;
}

/** The older zero point a column offset (mag) matches, or null. */
export function matchZeroPoint(offsetMag: number): { mbolSun: number; source: string } | null {
  for (const z of OLDER_ZERO_POINTS) if (Math.abs(offsetMag - (z.mbolSun - MBOL_SUN)) <= ZERO_POINT_MATCH_MAG) return z;
  return null;
}

export const bolometricMagnitudeMismatch: Rule = {
  meta: {
    id: ID,
    title: 'M_bol disagrees with the luminosity',
    severity: 'warning',
    stage: 'judge',
    needs: ['mbol', 'luminosity'],
    uses: ['id'],
    params: [
      {
        name: 'toleranceMag',
        type: 'number',
        default: 0.1,
        min: 0,
        description: 'Tolerance in mag added in quadrature to the propagated errors (rounding of M_bol and log L as printed).',
      },
      { name: 'sigmas', type: 'number', default: 3, min: 0.5, description: 'Residual, in combined sigma, beyond which a row is flagged.' },
      {
        name: 'errorMag',
        type: 'number',
        default: 2.5,
        min: 0,
        description: 'A flagged row more than this many mag off (1 dex in L for the default) is an error, not a warning.',
      },
      {
        name: 'maxOffsetMag',
        type: 'number',
        default: 0.1,
        min: 0,
        description: 'Largest whole-column zero-point offset that is reported once for the column and corrected for before rows are judged.',
      },
    ],
    references: [
      { cite: 'IAU 2015 Resolution B2 (L_0 = 3.0128e28 W, so M_bol,sun = 4.74 for the nominal L_sun of Resolution B3)' },
      { cite: 'Mamajek 2012, Basic Astronomical Data for the Sun (M_bol,sun = 4.7554)' },
      { cite: 'Healy et al. 2024, arXiv:2307.08785 (log L = (4.80 - M_bol)/2.5 throughout)' },
    ],
    doc: {
      catches:
        'Rows whose absolute bolometric magnitude disagrees with M_bol = -2.5 log10(L L_sun / L_0) on the IAU 2015 B2 scale (M_bol,sun = 4.74); a whole column on an older zero point (4.75, 4.7554, 4.72, 4.80) is named once, with the offset measured, and rows are judged against the shifted relation.',
      why:
        'M_bol and L state the same number in two scales: 1 mag is 0.4 dex in L, with the sign reversed. A row where they disagree has a slipped sign, a band magnitude (M_V) or an apparent magnitude in the M_bol column, or a luminosity that changed after M_bol was computed. A constant shift of a few hundredths of a mag is the zero point the catalog used, not an error. The residual is judged over sqrt(s_Mbol^2 + (2.5 s_logL)^2 + tolerance^2), each error on the side facing the expectation.',
      fires:
        'L = 1.0 L_sun with M_bol = -4.74: the IAU scale gives +4.74, so the row is 9.48 mag off; its sign is flipped (error; suggests 4.74).',
      silent:
        'Sirius A, L = 24.7 L_sun and M_bol = 1.26: the IAU 2015 B2 scale gives 1.258. The red-supergiant list computed with M_bol,sun = 4.80 (every row 0.06 mag fainter) gets one column note naming that zero point, and no row findings.',
      cautions:
        'The 0.1 mag tolerance (0.04 dex in L) covers rounding of printed values, not physics; with 3 sigma a row without errors may be off by up to 0.3 mag. A column offset is corrected only when three quarters of the rows share its sign and it is at most maxOffsetMag; a larger constant shift (an unknown convention) is judged row by row. M_bol derived from a band magnitude with a bolometric correction inherits the zero point of that correction scale. Measured: no row finding on the 640 red supergiants (one note, 4.80) nor on the 112 Mamajek dwarf-sequence rows (on the IAU scale to rounding).',
    },
  },
  start(ctx) {
    const tol = ctx.params.toleranceMag as number;
    const k = ctx.params.sigmas as number;
    const errorMag = ctx.params.errorMag as number;
    const maxOffset = ctx.params.maxOffsetMag as number;
    let input = 0;
    let column = '';
    let flagged = 0;

    const judge = (base: Finding, row: MbolRow, off: number): Finding | null => {
      const dev = row.residual - off;
      const allowed = k * row.sigma;
      if (Math.abs(dev) <= allowed) return null;
      flagged++;
      const exp = row.expected + off;
      const severity: Severity = Math.abs(dev) > errorMag ? 'error' : 'warning';
      // A dropped minus sign: the magnitude is the expected one with the sign reversed.
      const flipped = Math.abs(exp) > allowed && Math.abs(row.mbol + exp) <= allowed;
      const lFit = Math.pow(10, -0.4 * (row.mbol - off - MBOL_SUN));
      const shifted = off !== 0 ? ` plus the column's ${fmt(off, 3)} mag offset` : '';
      base.severity = severity;
      base.values = {
        ...base.values,
        logL: round6(row.logL),
        expectedMbol: round6(exp),
        residualMag: round6(dev),
        sigmaMag: round6(row.sigma),
        z: round6(dev / row.sigma),
        ...(off !== 0 ? { columnOffsetMag: round6(off) } : {}),
        ...(flipped ? { likelyCause: 'sign flipped' } : {}),
      };
      base.expected = { value: round6(exp) ?? undefined, min: round6(exp - allowed) ?? undefined, max: round6(exp + allowed) ?? undefined, unit: 'mag' };
      base.message =
        `M_bol = ${fmt(row.mbol, 3)} is ${fmt(Math.abs(dev), 3)} mag ${dev > 0 ? 'fainter' : 'brighter'} than log L = ${fmt(row.logL, 3)} gives ` +
        `(M_bol = ${fmt(exp, 3)} on the IAU 2015 B2 scale, M_bol,sun = 4.74${shifted}); ${fmt(Math.abs(dev) / row.sigma, 2)} sigma with sigma = ${fmt(row.sigma, 2)} mag` +
        (flipped ? '; the magnitude has the right size but the wrong sign' : `; as written, M_bol means L = ${fmt(lFit)} L_sun`);
      base.suggestion = {
        column,
        value: round6(exp) ?? exp,
        unit: 'mag',
        text: flipped ? `${fmt(exp, 3)} (the sign flipped back)` : `M_bol = ${fmt(exp, 3)} if the luminosity is right (else L = ${fmt(lFit)} L_sun)`,
      };
      return base;
    };
    const judgeRows = new OffsetJudge<MbolHeld>(1.25, 2.5e-4, MIN_OFFSET_MAG, maxOffset, COLUMN_VERDICT_MIN_ROWS, {
      build: (h, off) => judge(h.base, h.row, off),
      move: (h, shift) => ({ base: movedFinding(h.base, shift), row: h.row }),
    }, ctx.spill);

    return {
      check(batch, out, stats) {
        input = batch.input;
        const mb = batch.quantities.mbol!;
        const lum = batch.quantities.luminosity!;
        column = mb.column;
        const m = usableValues(batch, 'mbol')!;
        const l = usableValues(batch, 'luminosity')!;
        const logL = lum.log!;
        const lLo = lum.logErrLo ?? null;
        const lHi = lum.logErrHi ?? null;
        for (let i = 0; i < batch.length; i++) {
          const mi = m[i];
          const li = l[i];
          if (!Number.isFinite(mi)) {
            stats.skip('M_bol missing or unusable');
            continue;
          }
          if (!(li > 0)) {
            stats.skip(Number.isFinite(li) ? 'luminosity not positive' : 'luminosity missing or unusable');
            continue;
          }
          stats.checked++;
          const expected = MBOL_SUN - 2.5 * logL[i];
          const residual = mi - expected;
          // A listed M_bol fainter than expected moves toward it with its lower error; the
          // expectation moves toward it (fainter) when L goes down.
          const fainter = residual > 0;
          const sM = errAt(fainter ? mb.errLo : mb.errHi, i);
          const sL = 2.5 * errAt(fainter ? lLo : lHi, i);
          const sigma = Math.sqrt(sM * sM + sL * sL + tol * tol);
          if (!judgeRows.consider(residual, k * sigma)) continue;
          const row: MbolRow = { mbol: mi, logL: logL[i], expected, residual, sigma };
          const base = rowFinding(batch, i, {
            rule: ID,
            severity: 'warning',
            columns: [mb.column, lum.column],
            values: { [mb.column]: round6(mb.raw[i]), [lum.column]: round6(lum.raw[i]) },
            message: '',
          });
          judgeRows.route(residual, k * sigma, out, { base, row });
        }
      },
      finish(out) {
        const off = judgeRows.settle(out);
        if (off !== 0) {
          const zp = matchZeroPoint(off);
          const implied = MBOL_SUN + off;
          out.push(
            columnFinding({
              input,
              rule: ID,
              severity: 'note',
              columns: [column],
              values: { rowsJudged: judgeRows.tally.n, medianOffsetMag: round6(off), impliedMbolSun: round6(implied), knownZeroPoint: zp ? zp.mbolSun : null },
              expected: { value: 0, unit: 'mag' },
              message:
                `${column} sits ${fmt(Math.abs(off), 3)} mag ${off > 0 ? 'fainter' : 'brighter'} than the IAU 2015 B2 scale (M_bol,sun = 4.74) predicts from L, for the median of ${judgeRows.tally.n} rows, and three quarters of the rows share the sign: ` +
                (zp
                  ? `the column uses the older zero point M_bol,sun = ${zp.mbolSun} (${zp.source}). `
                  : `a zero point of M_bol,sun = ${fmt(implied, 4)}, which is not one we know (another L_sun, or a bolometric-correction scale). `) +
                `Rows near the threshold were judged against the relation shifted by this offset`,
              suggestion: {
                column,
                value: round6(-off) ?? -off,
                unit: 'mag',
                text: `state the zero point in the catalog's documentation; adding ${fmt(-off, 3)} mag puts ${column} on the IAU 2015 B2 scale`,
              },
            }),
          );
        }
        const overflow = overflowNote(input, ID, [column], judgeRows.held.dropped, `of ${column} were close to the threshold`);
        if (overflow) out.push(overflow);
      },
      save(): MbolState {
        return { judge: judgeRows.save(), input, column, flagged };
      },
      absorb(state, shift) {
        const s = state as MbolState;
        judgeRows.absorb(s.judge, shift);
        flagged += s.flagged;
        // Empty until a range sees a batch; the binding is one per input, so any range's will do.
        if (s.column) {
          input = s.input;
          column = s.column;
        }
      },
      summary() {
        return {
          toleranceMag: tol,
          sigmas: k,
          rowsJudged: judgeRows.tally.n,
          medianResidualMag: round6(judgeRows.tally.quantile(0.5)),
          columnOffsetMag: Number.isFinite(judgeRows.offset) ? round6(judgeRows.offset) : null,
          rowsFlagged: flagged,
          // Two-sided |residual| > k sigma over the judged rows, were the residuals Gaussian.
          expectedByChance: round6(expectedExceedances(k, judgeRows.tally.n, 0)),
          observed: flagged,
        };
      },
    };
  },
};
