import { expectedExceedances } from '../physics/statistics.js';
import { COLUMN_VERDICT_MIN_ROWS, columnFinding, fmt, round6, rowFinding } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Finding, Rule } from '../engine/types.js';
import { DEFERRED_CAP, DeferredFindings, FINISHED, dexAbove, dexBelow, errAt, overflowNote, type DeferredState } from '../physics/consistency.js';
import { LINEAR_FACTORS } from '../physics/units.js';
import { distanceFromParallax } from '../physics/stellar.js';

const ID = 'parallax-distance-mismatch';
/** Above this fraction of judged rows explained by one unit factor, the column as a whole is in that unit. */
const COLUMN_FRACTION = 0.5;
/** A unit factor is named when log10 of the ratio is within 2 sigma and this many dex of it. */
const FACTOR_WINDOW_MAX = 0.05;
/** No star is closer than Proxima Centauri (1.30 pc, parallax 768 mas): a reading giving less is ruled out. */
const NEAREST_STAR_PC = 1.29;

/**
 * Unit slips that scale distance/(1000/parallax) by a known factor. `ratio` is listed distance over
 * the distance from the parallax; each explains it either through the distance or the parallax.
 */
const FACTORS = [
  { ratio: 1 / 1000, distance: 'the distance is in kpc, not pc', distanceFix: 1000, parallax: 'the parallax is in arcsec, not mas', parallaxFix: 1000 },
  { ratio: 1000, distance: 'the distance is in pc under a kpc declaration', distanceFix: 1 / 1000, parallax: 'the parallax is in mas under an arcsec declaration', parallaxFix: 1 / 1000 },
  { ratio: LINEAR_FACTORS.distance.lyr, distance: 'the distance is in pc under a light-year declaration', distanceFix: 1 / LINEAR_FACTORS.distance.lyr, parallax: '', parallaxFix: 0 },
  { ratio: 1 / LINEAR_FACTORS.distance.lyr, distance: 'the distance is in light years, not pc', distanceFix: LINEAR_FACTORS.distance.lyr, parallax: '', parallaxFix: 0 },
] as const;
const FACTOR_LOGS = FACTORS.map((f) => Math.log10(f.ratio));

/** What a run over a row range hands on (see RuleRun.save). */
interface RangeTotals {
  deferred: DeferredState;
  input: number;
  distColumn: string;
  plxColumn: string;
  judged: number;
  judgedWithoutError: number;
  flagged: number;
}

export const parallaxDistanceMismatch: Rule = {
  meta: {
    id: ID,
    title: 'Distance disagrees with 1/parallax',
    severity: 'warning',
    stage: 'judge',
    needs: ['parallax', 'distance'],
    uses: ['id'],
    params: [
      {
        name: 'minSnr',
        type: 'number',
        default: 5,
        min: 0,
        description: 'Only rows with parallax/error above this are judged; below it 1/parallax is a biased distance.',
      },
      {
        name: 'toleranceFraction',
        type: 'number',
        default: 0.02,
        min: 0,
        description: 'Relative tolerance added in quadrature (rounding, parallaxes from another data release).',
      },
      {
        name: 'zeroPointMas',
        type: 'number',
        default: 0.02,
        min: 0,
        description:
          'Parallax zero-point term in mas, added in quadrature as one sigma: at 3 sigma it covers the Gaia DR2 offset (-0.029 mas) and the EDR3 one (about -0.021 mas) with its colour and magnitude dependence.',
      },
      { name: 'sigmas', type: 'number', default: 3, min: 0.5, description: 'Residual, in combined sigma, beyond which a row is flagged.' },
      {
        name: 'errorDex',
        type: 'number',
        default: 1,
        min: 0,
        description: 'A flagged row more than this many dex off (a factor of 10 for the default), or explained by a unit factor, is an error.',
      },
      {
        name: 'judgeWithoutError',
        type: 'boolean',
        default: true,
        description: 'Judge rows whose parallax has no error (with the tolerances only); false skips them.',
      },
    ],
    references: [
      { cite: 'IAU 2015 Resolution B2 (parsec = 648000/pi au; d/pc = 1000 / parallax/mas)' },
      { cite: 'Lindegren et al. 2018, A&A 616, A2 (Gaia DR2 parallax zero point -0.029 mas)' },
      { cite: 'Groenewegen 2021, A&A 654, A20 (Gaia EDR3 zero point about -0.021 mas)' },
      { cite: 'Bailer-Jones 2015, PASP 127, 994 (1/parallax is biased at low parallax/error)' },
    ],
    doc: {
      catches:
        'Rows whose distance disagrees with 1000/parallax(mas) where the parallax is measured well (parallax/error above 5); names mas vs arcsec and pc vs kpc (a factor of 1000) and pc vs light years (3.26) when the ratio sits on those factors, with the corrected value.',
      why:
        'For a well-measured parallax the distance is its inverse: d/pc = 1000 / (parallax/mas). A catalog listing both must agree to within the parallax error and the Gaia zero point (a few hundredths of a mas, which is 2-3 % at 1 mas). A factor of 1000 is a unit slip of one of the columns; other large misses are a distance taken from another star or another source. Below parallax/error = 5, 1/parallax is a biased estimator and probabilistic distances legitimately differ from it, so those rows are not judged. The ratio is judged in log space over sqrt(s_parallax^2 + s_distance^2 + (zero point/parallax)^2 + tolerance^2).',
      fires:
        'parallax = 379.21 mas, distance = 0.002637: 1000/parallax is 2.637 pc, the listed value is 1000 times smaller; the distance is in kpc (or the parallax in arcsec) (error; suggests 2.637 pc).',
      silent:
        'Sirius, parallax 379.21 +- 1.58 mas and distance 2.637 pc. A parallax of 0.5 +- 0.2 mas (parallax/error 2.5) is not judged; a negative parallax is skipped with its reason.',
      cautions:
        'The tolerance covers zero points and rounding, not priors: a Bayesian distance at parallax/error 5-10 can sit 5-25 % below 1/parallax, which the propagated parallax error mostly covers. Measured: none of the 3919 LIFE rows (distance = 1000/parallax to 0.1 %) and none of 550 red supergiants with DR3 parallax/error above 5 against Bailer-Jones geometric distances (a median 7 % below 1/parallax) are flagged. Rows without a parallax error are judged with the tolerances only (judgeWithoutError), which assumes the catalog derived one column from the other. Negative and zero parallaxes are not judged here (a negative parallax is a valid measurement of a distant star, not a distance).',
    },
  },
  start(ctx) {
    const minSnr = ctx.params.minSnr as number;
    const tolDex = Math.log10(1 + (ctx.params.toleranceFraction as number));
    const zp = ctx.params.zeroPointMas as number;
    const k = ctx.params.sigmas as number;
    const errorDex = ctx.params.errorDex as number;
    const withoutError = ctx.params.judgeWithoutError as boolean;
    const deferred = new DeferredFindings<Finding>(DEFERRED_CAP, FINISHED, ctx.spill);
    let input = 0;
    let distColumn = '';
    let plxColumn = '';
    let judged = 0;
    let judgedWithoutError = 0;
    let flagged = 0;
    let columnVerdict = -1;

    return {
      check(batch, out, stats) {
        input = batch.input;
        const plx = batch.quantities.parallax!;
        const dist = batch.quantities.distance!;
        distColumn = dist.column;
        plxColumn = plx.column;
        const p = usableValues(batch, 'parallax')!;
        const d = usableValues(batch, 'distance')!;
        for (let i = 0; i < batch.length; i++) {
          const pi = p[i];
          const di = d[i];
          if (!Number.isFinite(pi) || !Number.isFinite(di)) {
            stats.skip('parallax or distance missing or unusable');
            continue;
          }
          if (!(pi > 0)) {
            stats.skip('parallax zero or negative (1/parallax is no distance)');
            continue;
          }
          if (!(di > 0)) {
            stats.skip('distance zero or negative');
            continue;
          }
          const eLo = errAt(plx.errLo, i);
          const eHi = errAt(plx.errHi, i);
          const e = eLo > 0 && eHi > 0 ? (eLo + eHi) / 2 : Math.max(eLo, eHi);
          if (e > 0) {
            if (pi / e <= minSnr) {
              stats.skip(`parallax/error at most ${minSnr} (1/parallax biased)`);
              continue;
            }
          } else if (!withoutError) {
            stats.skip('parallax without error');
            continue;
          }
          stats.checked++;
          judged++;
          if (!(e > 0)) judgedWithoutError++;
          const fromPlx = distanceFromParallax(pi);
          const q = Math.log10(di / fromPlx);
          // Errors on the side facing agreement: a listed distance beyond 1/parallax moves in with
          // its lower error, and 1/parallax moves out as the parallax goes down.
          const far = q > 0;
          const sD = far ? dexBelow(di, errAt(dist.errLo, i)) : dexAbove(di, errAt(dist.errHi, i));
          const sP = far ? dexBelow(pi, eLo) : dexAbove(pi, eHi);
          const sZ = Math.log10(1 + zp / pi);
          const sigmaStated = Math.sqrt(sD * sD + sP * sP + tolDex * tolDex);
          const sigma = Math.sqrt(sigmaStated * sigmaStated + sZ * sZ);
          const allowed = k * sigma;
          // A unit slip is judged on the stated errors alone: the Gaia zero point shifts a small
          // parallax by a few hundredths of a mas, it cannot make an exact factor of 1000 (and it
          // would swamp a parallax written in arcsec, whose value is tiny).
          let factor = -1;
          const slipWindow = Math.min(2 * sigmaStated, FACTOR_WINDOW_MAX);
          if (Math.abs(q) > k * sigmaStated) {
            for (let j = 0; j < FACTORS.length; j++) if (Math.abs(q - FACTOR_LOGS[j]) <= slipWindow) factor = j;
          }
          if (Math.abs(q) <= allowed && factor < 0) continue;
          flagged++;
          const window = Math.min(2 * sigma, FACTOR_WINDOW_MAX);
          if (factor < 0) for (let j = 0; j < FACTORS.length; j++) if (Math.abs(q - FACTOR_LOGS[j]) <= window) factor = j;
          const values = {
            [plx.column]: round6(plx.raw[i]),
            [dist.column]: round6(dist.raw[i]),
            distanceFromParallaxPc: round6(fromPlx),
            ratio: round6(di / fromPlx),
            sigmaDex: round6(sigma),
            z: round6(q / sigma),
          };
          const expected = { value: round6(fromPlx) ?? undefined, min: round6(fromPlx * Math.pow(10, -allowed)) ?? undefined, max: round6(fromPlx * Math.pow(10, allowed)) ?? undefined, unit: 'pc' };
          const head = `distance = ${fmt(di)} pc but 1000/parallax = ${fmt(fromPlx)} pc (parallax ${fmt(pi)} mas${e > 0 ? `, parallax/error ${fmt(pi / e, 3)}` : ', no error given'})`;
          if (factor >= 0) {
            const fx = FACTORS[factor];
            // The two readings: the distance is wrong (true distance 1/parallax), or the parallax is
            // (true distance as listed). One that puts a star closer than Proxima is ruled out.
            const distFixed = di * fx.distanceFix;
            const plxFixed = pi * fx.parallaxFix;
            const distOk = distFixed >= NEAREST_STAR_PC;
            const plxOk = fx.parallaxFix > 0 && di >= NEAREST_STAR_PC;
            const blameParallax = plxOk && !distOk;
            const readings = [distOk || !plxOk ? fx.distance : '', plxOk ? fx.parallax : ''].filter((s) => s !== '').join(', or ');
            const f = rowFinding(batch, i, {
              rule: ID,
              severity: 'error',
              columns: [plx.column, dist.column],
              values: { ...values, likelyCause: blameParallax ? fx.parallax : fx.distance },
              expected,
              message: `${head}: a ratio of ${fmt(di / fromPlx)}, a unit slip: ${readings}`,
              suggestion: blameParallax
                ? { column: plx.column, value: round6(plxFixed) ?? plxFixed, unit: 'mas', text: `parallax = ${fmt(plxFixed)} mas (${fx.parallax})` }
                : { column: dist.column, value: round6(distFixed) ?? distFixed, unit: 'pc', text: `distance = ${fmt(distFixed)} pc (${fx.distance})` },
            });
            deferred.push(factor, f);
            continue;
          }
          out.push(
            rowFinding(batch, i, {
              rule: ID,
              severity: Math.abs(q) > errorDex ? 'error' : 'warning',
              columns: [plx.column, dist.column],
              values,
              expected,
              message: `${head}: the listed distance is ${fmt(Math.abs(q), 2)} dex (a factor ${fmt(Math.pow(10, Math.abs(q)), 3)}) ${far ? 'farther' : 'nearer'}, ${fmt(Math.abs(q) / sigma, 2)} sigma with sigma = ${fmt(sigma, 2)} dex; one of the two belongs to another star or source`,
              suggestion: { column: dist.column, value: round6(fromPlx) ?? fromPlx, unit: 'pc', text: `distance = ${fmt(fromPlx)} pc if the parallax is right` },
            }),
          );
        }
      },
      finish(out) {
        let top = 0;
        for (let j = 1; j < FACTORS.length; j++) if (deferred.count(j) > deferred.count(top)) top = j;
        const topCount = deferred.count(top);
        if (judged >= COLUMN_VERDICT_MIN_ROWS && topCount / judged > COLUMN_FRACTION) {
          columnVerdict = top;
          const fx = FACTORS[top];
          out.push(
            columnFinding({
              input,
              rule: ID,
              severity: 'error',
              columns: [plxColumn, distColumn],
              values: { rowsJudged: judged, rowsOnFactor: topCount, ratio: round6(fx.ratio) },
              message: `${topCount} of ${judged} judged rows have ${distColumn} / (1000/${plxColumn}) = ${fmt(fx.ratio)}: for the whole column, ${fx.distance}${fx.parallax ? `, or ${fx.parallax}` : ''}`,
              suggestion: {
                column: distColumn,
                value: fx.distanceFix,
                unit: '',
                text: `multiply ${distColumn} by ${fmt(fx.distanceFix)} or declare its unit${fx.parallax ? ` (or declare the unit of ${plxColumn})` : ''}, e.g. --unit ${distColumn}=${top === 0 ? 'kpc' : top === 3 ? 'lyr' : 'pc'}`,
              },
            }),
          );
        }
        deferred.flush(out, 0, columnVerdict);
        const overflow = overflowNote(input, ID, [plxColumn, distColumn], deferred.dropped, `sit on a unit factor between ${distColumn} and 1000/${plxColumn}`);
        if (overflow) out.push(overflow);
      },
      save(): RangeTotals {
        return { deferred: deferred.save(), input, distColumn, plxColumn, judged, judgedWithoutError, flagged };
      },
      absorb(state, shift) {
        const s = state as RangeTotals;
        deferred.absorb(s.deferred, shift);
        judged += s.judged;
        judgedWithoutError += s.judgedWithoutError;
        flagged += s.flagged;
        // Empty until a range sees a batch; the binding is one per input, so any range's will do.
        if (s.distColumn) {
          input = s.input;
          distColumn = s.distColumn;
          plxColumn = s.plxColumn;
        }
      },
      summary() {
        return {
          minSnr,
          sigmas: k,
          rowsJudged: judged,
          rowsJudgedWithoutError: judgedWithoutError,
          rowsFlagged: flagged,
          // Two-sided |residual| > k sigma over the rows judged with an error, were the residuals Gaussian.
          expectedByChance: round6(expectedExceedances(k, judged - judgedWithoutError, 0)),
          observed: flagged,
          columnUnitVerdict: columnVerdict >= 0 ? FACTORS[columnVerdict].distance : null,
        };
      },
    };
  },
};
