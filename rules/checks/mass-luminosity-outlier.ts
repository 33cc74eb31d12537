import { columnFinding, fmt, round6, rowFinding } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Finding, PrepassState, Rule } from '../engine/types.js';
import {
  CALIBRATION_DIFFERENCE_SIGMA,
  CALIBRATION_MIN_STARS,
  CalibrationSummary,
  fitCatalogRelation,
  type CalibrationState,
  type CatalogFit,
} from '../physics/calibration.js';
import { STAR_CLASS_NAMES, StarClass, starClasses } from '../physics/classify.js';
import {
  CLASSIC_SCATTER,
  EKER_SCATTER,
  MS_BRIGHTENING_DEX,
  RELATION_CHOICES,
  RELATION_NAMES,
  ZAMS_FAINT_SCATTER,
  catalogRelationAt,
  metallicityZamsAt,
  relationAt,
  type RelationChoice,
  type RelationVerdictInput,
} from '../physics/relation-choice.js';
import { movedFinding } from '../physics/consistency.js';
import { FixedHistogram, MAD_TO_SIGMA, autoThreshold, expectedExceedances, normalUpperTail, poissonUpperTail } from '../physics/statistics.js';

const ID = 'mass-luminosity-outlier';
const LN10 = Math.LN10;
/** Chance exceedances `--sigma auto` allows over the stars judged (Gaussian tails). */
const AUTO_TARGET = 0.5;
/** Most candidate stars held back while an automatic threshold waits for the star count. */
const CANDIDATE_CAP = 10_000;
/** A tail excess this improbable under Gaussian residuals (Poisson) marks heavy tails. */
const HEAVY_TAIL_P = 1e-3;

const newVerdict = (): RelationVerdictInput => ({ relation: '', logL: NaN, slope: NaN, scatter: NaN, brightAllowance: 0, scatterIfNoErrors: NaN });

/** A star beyond the floor threshold, kept until the automatic threshold is known. */
interface Candidate {
  z: number;
  finding: Finding;
  logL: number;
  sigma: number;
  brightAllowance: number;
}

/** What a run over a row range hands on (see RuleRun.save); the catalog fit comes from ctx.prepass. */
interface MlState {
  judgedBy: Map<string, number>;
  twoSided: number;
  faintOnly: number;
  exceed: number;
  input: number;
  column: string;
  zHist: HistogramState;
  beyond3: number;
  candidates: Candidate[];
  dropped: HistogramState;
}

interface HistogramState {
  counts: Float64Array;
  under: number;
  over: number;
  total: number;
}

const saveHistogram = (h: FixedHistogram): HistogramState => ({ counts: h.counts.slice(), under: h.under, over: h.over, total: h.total });

/** Counts are whole numbers, so the sums are exact whatever the order. */
function absorbHistogram(h: FixedHistogram, s: HistogramState): void {
  for (let j = 0; j < s.counts.length; j++) h.counts[j] += s.counts[j];
  h.under += s.under;
  h.over += s.over;
  h.total += s.total;
}

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
        description: 'Residual, in combined sigma, beyond which a star is flagged; with thresholdMode auto, the lowest threshold allowed.',
      },
      {
        name: 'thresholdMode',
        type: 'string',
        default: 'fixed',
        choices: ['fixed', 'auto'],
        description:
          'fixed: use threshold; auto (--sigma auto): the k with (2 N_two-sided + N_faint-only) Q(k) = 0.5 over the stars judged, never below threshold; flagged stars are then listed after the input.',
      },
      {
        name: 'relation',
        type: 'string',
        default: 'default',
        choices: RELATION_CHOICES,
        description:
          "default: Eker 2018 inside 0.179-31 M_sun, Tout 1996 ZAMS as a faint bound outside it (0.1-100 M_sun); catalog: the catalog's own robust fit with Eker's break points (two passes); or one relation alone.",
      },
    ],
    references: [
      { cite: 'Eker et al. 2018, MNRAS 479, 5491, Table 4 (six-piece empirical relation, 0.179-31 M_sun)' },
      { cite: 'Tout, Pols, Eggleton & Han 1996, MNRAS 281, 257 (ZAMS luminosity, 0.1-100 M_sun)' },
      { cite: 'Salaris & Cassisi 2005, Evolution of Stars and Stellar Populations (classic piecewise relation)' },
      { cite: 'Huber 1981, Robust Statistics; Beaton & Tukey 1974, Technometrics 16, 147 (Huber and biweight reweighting of the catalog fit, common practice)' },
    ],
    doc: {
      catches:
        'Main-sequence stars whose luminosity is too far from the mass-luminosity relation at their mass, in units of the combined uncertainty sqrt(s_int^2 + s_logL^2 + (slope s_logM)^2), each error taken on the side that faces the relation.',
      why:
        "On the main sequence L is set by M (and weakly by age and metallicity), so a residual of a dex or more means a wrong mass, a wrong luminosity, or a star that is not on the main sequence. The default judges 0.179-31 M_sun against Eker et al. 2018 (detached eclipsing binaries) and 0.1-0.179 and 31-100 M_sun against the Tout et al. 1996 ZAMS, below which no main-sequence star lies and above which stars rise by at most about 0.5 dex during the main sequence. With [Fe/H] bound, a star is flagged only if the ZAMS at its own metallicity does not explain it either. `relation catalog` first fits the catalog's own main-sequence stars (robust, per Eker segment) and judges against that fit; the report gives the fitted coefficients next to the published ones and a note where they differ by more than 3 sigma.",
      fires:
        'M = 0.8 M_sun, L = 0.020 L_sun, logg 4.6: Eker 2018 expects log L = -0.56; the star is 1.1 dex fainter, 7 sigma (warning).',
      silent:
        'M = 2.0 M_sun, L = 19 L_sun, logg 4.2: 0.07 dex from the relation. A giant (logg 2.5) or white dwarf (logg 8) is not judged at all.',
      cautions:
        "Only main-sequence stars are judged: by a stage or spectral-type column, else by logg 3.5-5.5 (quoted, or from M and R). Where nothing tells the class, only the faint side is judged, because evolved stars are brighter than the relation, never much fainter. The intrinsic scatter per mass range is our own measurement on real catalogs, not a published value. A fixed threshold k gives (2 N_two-sided + N_faint-only) Q(k) chance exceedances for Gaussian residuals (0.0027 N at 3 sigma, two-sided); the summary states that number, the number seen and a heavy-tail check, and `--sigma auto` raises k until the expectation is 0.5. The catalog fit describes the catalog, errors and all: it hides a systematic shared by most of its stars, which is what the note about the published relation is for. No relation is extrapolated: stars outside 0.1-100 M_sun (0.179-31 for eker2018) are not judged.",
    },
  },
  prepass: {
    wanted: (params) => params.relation === 'catalog',
    begin() {
      const summary = new CalibrationSummary();
      return {
        observe(batch) {
          const mass = batch.quantities.mass;
          const lum = batch.quantities.luminosity;
          if (!mass || !lum || !lum.log) return;
          const classes = starClasses(batch);
          const m = mass.value;
          const logL = lum.log;
          const rel = newVerdict();
          for (let i = 0; i < batch.length; i++) {
            const mi = m[i];
            if (!(mi > 0) || !Number.isFinite(logL[i]) || classes[i] !== StarClass.MainSequence) continue;
            if (!relationAt('eker2018', mi, rel)) continue;
            // The combined measurement sigma, symmetric (the mean of the two sides): it only sets
            // how much of the observed spread is measurement rather than the stars.
            const lo = lum.logErrLo?.[i] ?? NaN;
            const hi = lum.logErrHi?.[i] ?? NaN;
            const sL = Number.isFinite(lo) && Number.isFinite(hi) ? (lo + hi) / 2 : Number.isFinite(lo) ? lo : hi;
            const mlo = mass.errLo?.[i] ?? NaN;
            const mhi = mass.errHi?.[i] ?? NaN;
            const dM = Number.isFinite(mlo) && Number.isFinite(mhi) ? (mlo + mhi) / 2 : Number.isFinite(mlo) ? mlo : mhi;
            const sLogM = Number.isFinite(dM) ? dM / (mi * LN10) : NaN;
            const known = Number.isFinite(sL) || Number.isFinite(sLogM);
            const sigma = known ? Math.sqrt((Number.isFinite(sL) ? sL * sL : 0) + (Number.isFinite(sLogM) ? rel.slope * rel.slope * sLogM * sLogM : 0)) : NaN;
            summary.add(mi, logL[i], sigma);
          }
        },
        result: () => summary.toState() as unknown as PrepassState,
      };
    },
    merge: (a, b) => CalibrationSummary.merge(a as unknown as CalibrationState, b as unknown as CalibrationState) as unknown as PrepassState,
  },
  start(ctx) {
    const floor = ctx.params.threshold as number;
    const auto = ctx.params.thresholdMode === 'auto';
    const choice = ctx.params.relation as RelationChoice;
    const fit: CatalogFit | null =
      choice === 'catalog' && ctx.prepass ? fitCatalogRelation(CalibrationSummary.fromState(ctx.prepass as unknown as CalibrationState)) : null;
    const rel = newVerdict();
    const zrel = newVerdict();
    const locate = (mi: number, out: RelationVerdictInput) => (fit ? catalogRelationAt(fit, mi, out) : relationAt(choice, mi, out));
    let logErrLo: Float64Array | null = null;
    let logErrHi: Float64Array | null = null;
    let mErrLo: Float64Array | null = null;
    let mErrHi: Float64Array | null = null;
    let m: Float64Array = new Float64Array(0);
    /**
     * Deviation of log L from a relation in combined sigma: 0 inside the relation (or inside the
     * brightening band above a ZAMS bound), positive above, negative below. Errors are taken on
     * the side that faces the relation: for a star above it the lower L error and the upper M error.
     */
    const zScore = (r: RelationVerdictInput, li: number, i: number): number => {
      let resid = li - r.logL;
      if (resid > 0) resid = Math.max(0, resid - r.brightAllowance);
      if (resid === 0) return 0;
      const sL = resid > 0 ? (logErrLo?.[i] ?? NaN) : (logErrHi?.[i] ?? NaN);
      const dM = resid > 0 ? (mErrHi?.[i] ?? NaN) : (mErrLo?.[i] ?? NaN);
      const sLogM = Number.isFinite(dM) ? dM / (m[i] * LN10) : 0;
      const noErrors = !Number.isFinite(sL) && !Number.isFinite(dM);
      const sc = noErrors && Number.isFinite(r.scatterIfNoErrors) ? r.scatterIfNoErrors! : r.scatter;
      const sigma = Math.sqrt(sc * sc + (Number.isFinite(sL) ? sL * sL : 0) + r.slope * r.slope * sLogM * sLogM);
      return resid / sigma;
    };
    const judgedBy = new Map<string, number>();
    let twoSided = 0;
    let faintOnly = 0;
    let exceed = 0;
    let input = 0;
    let column = '';
    // Residuals (in sigma) of stars judged two-sided against a mean relation, for the tail check.
    const zHist = new FixedHistogram(-10, 10, 0.01);
    let beyond3 = 0;
    // --sigma auto: stars beyond the floor wait here until the star count fixes the threshold.
    let candidates: Candidate[] = [];
    const dropped = new FixedHistogram(0, 100, 0.01);
    const prune = () => {
      candidates.sort((a, b) => Math.abs(b.z) - Math.abs(a.z));
      for (const c of candidates.slice(CANDIDATE_CAP)) dropped.add(Math.abs(c.z));
      candidates = candidates.slice(0, CANDIDATE_CAP);
    };
    const bandFor = (logL: number, sigma: number, allowance: number, k: number) => ({
      min: round6(Math.pow(10, logL - k * sigma)) ?? undefined,
      max: round6(Math.pow(10, logL + allowance + k * sigma)) ?? undefined,
    });
    return {
      check(batch, out, stats) {
        const mass = batch.quantities.mass!;
        const lum = batch.quantities.luminosity!;
        input = batch.input;
        column = lum.column;
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
          if (!locate(mi, rel)) {
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
          if (!onlyFaint && rel.brightAllowance === 0) {
            zHist.add(z);
            if (Math.abs(z) > 3) beyond3++;
          }
          // With [Fe/H] bound, a star is flagged only if the ZAMS at its own metallicity does not
          // explain it either; the smaller deviation is the one reported.
          const fehI = feh ? feh[i] : NaN;
          if (Math.abs(z) > floor && Number.isFinite(fehI) && metallicityZamsAt(mi, fehI, zrel)) {
            const zz = zScore(zrel, li, i);
            if (Math.sign(zz) !== Math.sign(z) || Math.abs(zz) <= floor) z = 0;
            else if (Math.abs(zz) < Math.abs(z)) {
              z = zz;
              Object.assign(rel, zrel);
            }
          }
          if (onlyFaint && z > 0) continue;
          if (Math.abs(z) <= floor) continue;
          const resid = li - rel.logL;
          const sigma = Math.abs((resid > 0 ? Math.max(0, resid - rel.brightAllowance) : resid) / z);
          const side = resid > 0 ? 'above' : 'below';
          const relName = RELATION_NAMES[rel.relation] ?? rel.relation;
          const zamsNote = rel.brightAllowance > 0 ? (resid > 0 ? ` (ZAMS + ${rel.brightAllowance} dex main-sequence brightening)` : ' (ZAMS, the faint bound)') : '';
          const finding = rowFinding(batch, i, {
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
            expected: { value: round6(Math.pow(10, rel.logL)) ?? undefined, ...bandFor(rel.logL, sigma, rel.brightAllowance, floor), unit: 'solLum' },
            message: `log L = ${fmt(li, 3)} is ${fmt(Math.abs(li - rel.logL), 2)} dex ${side} ${relName}${zamsNote} for M = ${fmt(mi)} M_sun (expected log L = ${fmt(rel.logL, 3)}; ${fmt(Math.abs(z), 2)} sigma with sigma = ${fmt(sigma, 2)} dex)${onlyFaint ? '; class unknown, judged on the faint side only' : ''}`,
            suggestion: null,
          });
          if (!auto) {
            exceed++;
            out.push(finding);
            continue;
          }
          candidates.push({ z, finding, logL: rel.logL, sigma, brightAllowance: rel.brightAllowance });
          if (candidates.length >= 2 * CANDIDATE_CAP) prune();
        }
      },
      finish(out) {
        if (auto) {
          if (candidates.length > CANDIDATE_CAP) prune();
          const k = autoThreshold(twoSided, faintOnly, AUTO_TARGET, floor);
          const kept = candidates.filter((c) => Math.abs(c.z) > k).sort((a, b) => (a.finding.row ?? 0) - (b.finding.row ?? 0));
          let unlisted = 0;
          for (let j = 0; j < dropped.counts.length; j++) if (dropped.min + (j + 1) * dropped.step > k) unlisted += dropped.counts[j];
          unlisted += dropped.over;
          for (const c of kept) {
            c.finding.expected = { ...c.finding.expected!, ...bandFor(c.logL, c.sigma, c.brightAllowance, k) };
            out.push(c.finding);
          }
          exceed = kept.length + unlisted;
          if (unlisted > 0) {
            out.push(
              columnFinding({
                input,
                rule: ID,
                severity: 'warning',
                columns: [column],
                values: { rowsBeyondThreshold: exceed, rowsListed: kept.length },
                message: `${exceed} stars lie beyond the automatic threshold of ${fmt(k, 3)} sigma; the ${kept.length} farthest are listed, ${unlisted} more are not`,
              }),
            );
          }
          candidates = [];
        }
        if (fit && input === 0) {
          const off = fit.segments.filter((s) => s.differs);
          if (off.length) {
            const parts = off.map(
              (s) =>
                `${s.lower}-${s.upper} M_sun: ${s.offsetDex >= 0 ? '+' : ''}${fmt(s.offsetDex, 2)} +- ${fmt(s.offsetErrDex, 2)} dex in log L at M = ${fmt(10 ** s.pivotLogM, 3)}${s.mode === 'line' ? `, slope ${fmt(s.slope, 3)} +- ${fmt(s.slopeErr, 2)} against ${s.publishedSlope}` : ''} (${s.stars} stars)`,
            );
            out.push(
              columnFinding({
                input,
                rule: ID,
                severity: 'note',
                columns: [column],
                values: { segmentsDiffering: off.length, segmentsFitted: fit.segments.filter((s) => s.mode !== 'published').length, starsFitted: fit.stars },
                message: `the catalog's own mass-luminosity relation differs from Eker et al. 2018 by more than ${CALIBRATION_DIFFERENCE_SIGMA} sigma of its uncertainty in ${off.length} mass range${off.length === 1 ? '' : 's'}: ${parts.join('; ')}. Metallicity or age of the sample, a selection effect, or a systematic in the pipeline that made M or L?`,
              }),
            );
          }
        }
      },
      save(): MlState {
        // Changes no verdict, only the state's size: a star not among this range's CANDIDATE_CAP
        // farthest can never be among the whole input's (see prune).
        if (candidates.length > CANDIDATE_CAP) prune();
        return {
          judgedBy: new Map(judgedBy),
          twoSided,
          faintOnly,
          exceed,
          input,
          column,
          zHist: saveHistogram(zHist),
          beyond3,
          candidates: candidates.slice(),
          dropped: saveHistogram(dropped),
        };
      },
      absorb(state, shift) {
        const s = state as MlState;
        for (const [name, n] of s.judgedBy) judgedBy.set(name, (judgedBy.get(name) ?? 0) + n);
        twoSided += s.twoSided;
        faintOnly += s.faintOnly;
        exceed += s.exceed;
        beyond3 += s.beyond3;
        absorbHistogram(zHist, s.zHist);
        absorbHistogram(dropped, s.dropped);
        // Appended after this run's own: among equal |z| the earlier row stays ahead, as in one pass.
        const moves = shift.rows !== 0 || shift.lines !== 0;
        for (const c of s.candidates) candidates.push(moves ? { ...c, finding: movedFinding(c.finding, shift) } : c);
        if (candidates.length >= 2 * CANDIDATE_CAP) prune();
        // Empty until a range sees a batch; the binding is one per input, so any range's will do.
        if (s.column) {
          input = s.input;
          column = s.column;
        }
      },
      summary() {
        const k = auto ? autoThreshold(twoSided, faintOnly, AUTO_TARGET, floor) : floor;
        const expected = expectedExceedances(k, twoSided, faintOnly);
        const nTail = zHist.total;
        const gauss3 = 2 * normalUpperTail(3);
        const med = zHist.quantile(0.5);
        const robust = MAD_TO_SIGMA * zHist.mad(med);
        let beyondRobust = 0;
        if (Number.isFinite(robust) && robust > 0) {
          const lo = med - 3 * robust;
          const hi = med + 3 * robust;
          beyondRobust = zHist.under + zHist.over;
          for (let j = 0; j < zHist.counts.length; j++) {
            const c = zHist.min + (j + 0.5) * zHist.step;
            if (c < lo || c > hi) beyondRobust += zHist.counts[j];
          }
        }
        const tailP = poissonUpperTail(beyondRobust, nTail * gauss3);
        return {
          relation: choice,
          judgedBy: Object.fromEntries(judgedBy),
          judgedTwoSided: twoSided,
          judgedFaintSideOnly: faintOnly,
          threshold: round6(k),
          thresholdMode: auto ? 'auto' : 'fixed',
          ...(auto ? { thresholdFloor: floor, autoTargetExpected: AUTO_TARGET } : {}),
          expectedByChance: round6(expected),
          observed: exceed,
          chanceProbabilityOfObserved: round6(poissonUpperTail(exceed, expected)),
          residualTails: {
            judged: nTail,
            beyondThreeSigma: beyond3,
            fractionBeyondThreeSigma: nTail ? round6(beyond3 / nTail) : null,
            gaussianFraction: round6(gauss3),
            robustSigmaOfZ: round6(robust),
            beyondThreeRobustSigma: beyondRobust,
            fractionBeyondThreeRobustSigma: nTail ? round6(beyondRobust / nTail) : null,
            tailProbabilityIfGaussian: round6(tailP),
            heavyTailed: nTail >= 100 && tailP < HEAVY_TAIL_P,
          },
          intrinsicScatter: {
            eker2018: EKER_SCATTER.map(({ upper, scatter }) => ({ upper, scatter })),
            tout1996BelowZams: ZAMS_FAINT_SCATTER,
            tout1996BrighteningAllowance: MS_BRIGHTENING_DEX,
            classic: CLASSIC_SCATTER,
          },
          ...(choice === 'catalog'
            ? {
                catalogFit: fit
                  ? {
                      starsFitted: fit.stars,
                      minStarsPerSegment: CALIBRATION_MIN_STARS,
                      differenceSigma: CALIBRATION_DIFFERENCE_SIGMA,
                      segments: fit.segments.map((s) => ({
                        range: [s.lower, s.upper],
                        stars: s.stars,
                        starsMoreThan3DexOff: s.starsOffGrid,
                        mode: s.mode,
                        slope: round6(s.slope),
                        slopeErr: round6(s.slopeErr),
                        intercept: round6(s.intercept),
                        interceptErr: round6(s.interceptErr),
                        publishedSlope: s.publishedSlope,
                        publishedIntercept: s.publishedIntercept,
                        pivotMass: round6(10 ** s.pivotLogM),
                        offsetAtPivotDex: round6(s.offsetDex),
                        offsetErrDex: round6(s.offsetErrDex),
                        offsetSigma: round6(s.offsetSigma),
                        slopeSigma: round6(s.slopeSigma),
                        differs: s.differs,
                        scatterDex: round6(s.scatterDex),
                        medianMeasurementErrorDex: round6(s.medianMeasurementErrorDex),
                        starsWithErrors: s.starsWithErrors,
                        intrinsicScatterDex: round6(s.intrinsicScatterDex),
                        publishedScatterDex: EKER_SCATTER.find((e) => s.upper <= e.upper)?.scatter ?? null,
                      })),
                    }
                  : { note: 'no first pass ran (the rule was run without the catalog pass), so the published relation judged every star' },
              }
            : {}),
        };
      },
    };
  },
};
