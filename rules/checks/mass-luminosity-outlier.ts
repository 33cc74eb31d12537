import { fmt, round6, rowFinding } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Rule } from '../engine/types.js';
import { STAR_CLASS_NAMES, StarClass, starClasses } from '../physics/classify.js';
import {
  CLASSIC_SCATTER,
  EKER_SCATTER,
  MS_BRIGHTENING_DEX,
  RELATION_CHOICES,
  RELATION_NAMES,
  ZAMS_FAINT_SCATTER,
  metallicityZamsAt,
  relationAt,
  type RelationChoice,
  type RelationVerdictInput,
} from '../physics/relation-choice.js';
import { normalUpperTail } from '../physics/statistics.js';

const ID = 'mass-luminosity-outlier';
const LN10 = Math.LN10;

/**
 * Main-sequence luminosity follows mass closely (L ~ M^2..M^5.7 by segment). A star far from the
 * relation, once its measurement errors and the relation's intrinsic scatter are counted, is either
 * not on the main sequence or has a wrong mass or luminosity.
 */
export const massLuminosityOutlier: Rule = {
  meta: {
    id: ID,
    title: 'Main-sequence star far from the mass-luminosity relation',
    severity: 'warning',
    stage: 'judge',
    needs: ['mass', 'luminosity'],
    uses: ['logg', 'radius', 'stage', 'feh', 'id'],
    params: [
      {
        name: 'threshold',
        type: 'number',
        default: 3,
        min: 0.5,
        description: 'Residual, in combined sigma, beyond which a star is flagged.',
      },
      {
        name: 'relation',
        type: 'string',
        default: 'default',
        choices: RELATION_CHOICES,
        description:
          'default: Eker 2018 inside 0.179-31 M_sun, Tout 1996 ZAMS as a faint bound outside it (0.1-100 M_sun); or one relation alone.',
      },
    ],
    references: [
      { cite: 'Eker et al. 2018, MNRAS 479, 5491, Table 4 (six-piece empirical relation, 0.179-31 M_sun)' },
      { cite: 'Tout, Pols, Eggleton & Han 1996, MNRAS 281, 257 (ZAMS luminosity, 0.1-100 M_sun)' },
      { cite: 'Salaris & Cassisi 2005, Evolution of Stars and Stellar Populations (classic piecewise relation)' },
    ],
    doc: {
      catches:
        'Main-sequence stars whose luminosity is too far from the mass-luminosity relation at their mass, in units of the combined uncertainty sqrt(s_int^2 + s_logL^2 + (slope s_logM)^2).',
      why:
        'On the main sequence L is set by M (and weakly by age and metallicity), so a residual of a dex or more means a wrong mass, a wrong luminosity, or a star that is not on the main sequence. The default judges 0.179-31 M_sun against Eker et al. 2018 (detached eclipsing binaries) and 0.1-0.179 and 31-100 M_sun against the Tout et al. 1996 ZAMS, below which no main-sequence star lies and above which stars rise by at most about 0.5 dex during the main sequence.',
      fires:
        'M = 0.8 M_sun, L = 0.020 L_sun, logg 4.6: Eker 2018 expects log L = -0.56; the star is 1.1 dex fainter, 7 sigma (warning).',
      silent:
        'M = 2.0 M_sun, L = 19 L_sun, logg 4.2: 0.07 dex from the relation. A giant (logg 2.5) or white dwarf (logg 8) is not judged at all.',
      cautions:
        'Only main-sequence stars are judged: by a stage or spectral-type column, else by logg 3.5-5.5 (quoted, or from M and R). Where nothing tells the class, only the faint side is judged, because evolved stars are brighter than the relation, never much fainter. The intrinsic scatter per mass range is our own measurement on real catalogs, not a published value. With N stars judged at 3 sigma, about 0.0027 N (two-sided) exceedances are expected by chance; the summary states the number. No relation is extrapolated: stars outside 0.1-100 M_sun (0.179-31 for eker2018) are not judged.',
    },
  },
  start(ctx) {
    const threshold = ctx.params.threshold as number;
    const choice = ctx.params.relation as RelationChoice;
    const rel: RelationVerdictInput = { relation: '', logL: NaN, slope: NaN, scatter: NaN, brightAllowance: 0 };
    const zrel: RelationVerdictInput = { relation: '', logL: NaN, slope: NaN, scatter: NaN, brightAllowance: 0 };
    let logErrLo: Float64Array | null = null;
    let logErrHi: Float64Array | null = null;
    let mErrLo: Float64Array | null = null;
    let mErrHi: Float64Array | null = null;
    let m: Float64Array = new Float64Array(0);
    /**
     * Deviation of log L from a relation in combined sigma: 0 inside the relation (or inside the
     * brightening band above a ZAMS bound), positive above, negative below. Errors are taken on
     * the side that faces the relation.
     */
    const zScore = (r: RelationVerdictInput, li: number, i: number): number => {
      let resid = li - r.logL;
      if (resid > 0) resid = Math.max(0, resid - r.brightAllowance);
      if (resid === 0) return 0;
      const sL = resid > 0 ? (logErrLo?.[i] ?? NaN) : (logErrHi?.[i] ?? NaN);
      const dM = resid > 0 ? (mErrHi?.[i] ?? NaN) : (mErrLo?.[i] ?? NaN);
      const sLogM = Number.isFinite(dM) ? dM / (m[i] * LN10) : 0;
      const sigma = Math.sqrt(r.scatter * r.scatter + (Number.isFinite(sL) ? sL * sL : 0) + r.slope * r.slope * sLogM * sLogM);
      return resid / sigma;
    };
    const judgedBy = new Map<string, number>();
    let twoSided = 0;
    let faintOnly = 0;
    let exceed = 0;
    return {
      check(batch, out, stats) {
        const mass = batch.quantities.mass!;
        const lum = batch.quantities.luminosity!;
        m = usableValues(batch, 'mass')!;
        const l = usableValues(batch, 'luminosity')!;
        const logL = lum.log!;
        logErrLo = lum.logErrLo ?? null;
        logErrHi = lum.logErrHi ?? null;
        mErrLo = mass.errLo;
        mErrHi = mass.errHi;
        const feh = batch.quantities.feh?.value ?? null;
        const classes = starClasses(batch);
        for (let i = 0; i < batch.length; i++) {
          const mi = m[i];
          if (!(mi > 0) || !(l[i] > 0)) {
            stats.skip('mass or luminosity missing or unusable');
            continue;
          }
          const cls = classes[i];
          if (cls !== StarClass.MainSequence && cls !== StarClass.Unknown) {
            stats.skip(`not a main-sequence star (${STAR_CLASS_NAMES[cls]})`);
            continue;
          }
          if (!relationAt(choice, mi, rel)) {
            stats.skip('mass outside the range of the relation');
            continue;
          }
          stats.checked++;
          const onlyFaint = cls === StarClass.Unknown;
          if (onlyFaint) faintOnly++;
          else twoSided++;
          judgedBy.set(rel.relation, (judgedBy.get(rel.relation) ?? 0) + 1);
          const li = logL[i];
          let z = zScore(rel, li, i);
          // With [Fe/H] bound, a star is flagged only if the ZAMS at its own metallicity does not
          // explain it either; the smaller deviation is the one reported.
          const fehI = feh ? feh[i] : NaN;
          if (Math.abs(z) > threshold && Number.isFinite(fehI) && metallicityZamsAt(mi, fehI, zrel)) {
            const zz = zScore(zrel, li, i);
            if (Math.sign(zz) !== Math.sign(z) || Math.abs(zz) <= threshold) z = 0;
            else if (Math.abs(zz) < Math.abs(z)) {
              z = zz;
              Object.assign(rel, zrel);
            }
          }
          if (onlyFaint && z > 0) continue;
          if (Math.abs(z) <= threshold) continue;
          const resid = li - rel.logL;
          const sigma = Math.abs((resid > 0 ? Math.max(0, resid - rel.brightAllowance) : resid) / z);
          exceed++;
          const side = resid > 0 ? 'above' : 'below';
          const relName = RELATION_NAMES[rel.relation] ?? rel.relation;
          const zamsNote = rel.brightAllowance > 0 ? (resid > 0 ? ` (ZAMS + ${rel.brightAllowance} dex main-sequence brightening)` : ' (ZAMS, the faint bound)') : '';
          const lo = rel.logL - threshold * sigma;
          const hi = rel.logL + rel.brightAllowance + threshold * sigma;
          out.push(
            rowFinding(batch, i, {
              rule: ID,
              severity: 'warning',
              columns: [mass.column, lum.column],
              values: {
                [mass.column]: round6(mass.raw[i]),
                [lum.column]: round6(lum.raw[i]),
                logL: round6(li),
                relation: rel.relation,
                residualDex: round6(li - rel.logL),
                sigmaDex: round6(sigma),
                z: round6(z),
              },
              expected: { value: round6(Math.pow(10, rel.logL)) ?? undefined, min: round6(Math.pow(10, lo)) ?? undefined, max: round6(Math.pow(10, hi)) ?? undefined, unit: 'solLum' },
              message: `log L = ${fmt(li, 3)} is ${fmt(Math.abs(li - rel.logL), 2)} dex ${side} ${relName}${zamsNote} for M = ${fmt(mi)} M_sun (expected log L = ${fmt(rel.logL, 3)}; ${fmt(Math.abs(z), 2)} sigma with sigma = ${fmt(sigma, 2)} dex)${onlyFaint ? '; class unknown, judged on the faint side only' : ''}`,
              suggestion: null,
            }),
          );
        }
      },
      summary() {
        // Chance exceedances for Gaussian residuals: two tails for fully judged stars, one for faint-only.
        const p = normalUpperTail(threshold);
        return {
          relation: choice,
          judgedBy: Object.fromEntries(judgedBy),
          judgedTwoSided: twoSided,
          judgedFaintSideOnly: faintOnly,
          threshold,
          expectedByChance: round6(twoSided * 2 * p + faintOnly * p),
          observed: exceed,
          intrinsicScatter: {
            eker2018: EKER_SCATTER.map(({ upper, scatter }) => ({ upper, scatter })),
            tout1996BelowZams: ZAMS_FAINT_SCATTER,
            tout1996BrighteningAllowance: MS_BRIGHTENING_DEX,
            classic: CLASSIC_SCATTER,
          },
        };
      },
    };
  },
};
