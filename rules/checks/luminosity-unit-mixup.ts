import { columnFinding, fmt, round6, rowFinding } from '../engine/findings.js';
import { markUnusable } from '../engine/usable.js';
import type { Finding, Rule } from '../engine/types.js';
import { StarClass, starClasses } from '../physics/classify.js';
import { L_SUN_W } from '../physics/constants.js';
import { relationAt, type RelationVerdictInput } from '../physics/relation-choice.js';
import { logLuminosityFromRadiusTeff } from '../physics/stellar.js';

const ID = 'luminosity-unit-mixup';
const LN10 = Math.LN10;
const LOG_LSUN_W = Math.log10(L_SUN_W);
const LOG_LSUN_ERG = LOG_LSUN_W + 7;

/** The readings a luminosity cell can have: its log10 L/L_sun is (log ? raw : log10 raw) + offset. */
const READINGS = [
  { unit: 'solLum', log: false, offset: 0 },
  { unit: 'W', log: false, offset: -LOG_LSUN_W },
  { unit: 'erg/s', log: false, offset: -LOG_LSUN_ERG },
  { unit: 'log(solLum)', log: true, offset: 0 },
  { unit: 'log(W)', log: true, offset: -LOG_LSUN_W },
  { unit: 'log(erg/s)', log: true, offset: -LOG_LSUN_ERG },
] as const;

/** Luminosities real stars have, in log L_sun: brown-dwarf boundary to beyond the brightest known. */
const PLAUSIBLE_LOG_MIN = -6;
const PLAUSIBLE_LOG_MAX = 7.5;
/** Most rows kept for the per-row listing while deciding whether the whole column is affected. */
const ROW_BUFFER_CAP = 20_000;
/** Fewer judged rows than this never make a column-level verdict: a short table gets its rows listed. */
const COLUMN_MIN_ROWS = 10;

function readingLog(r: (typeof READINGS)[number], raw: number): number {
  return r.log ? raw + r.offset : raw > 0 ? Math.log10(raw) + r.offset : NaN;
}

function meanErr(lo: Float64Array | null, hi: Float64Array | null, i: number): number {
  const a = lo ? lo[i] : NaN;
  const b = hi ? hi[i] : NaN;
  if (Number.isFinite(a) && Number.isFinite(b)) return (a + b) / 2;
  return Number.isFinite(a) ? a : Number.isFinite(b) ? b : 0;
}

export const luminosityUnitMixup: Rule = {
  meta: {
    id: ID,
    title: 'Luminosity in another unit than its column declares',
    severity: 'error',
    stage: 'screen',
    needs: ['luminosity'],
    uses: ['radius', 'teff', 'mass', 'logg', 'stage', 'id'],
    params: [
      { name: 'fireSigma', type: 'number', default: 5, min: 1, description: 'The declared reading must miss the star by more than this many sigma.' },
      { name: 'acceptSigma', type: 'number', default: 3, min: 0.5, description: 'The suggested reading must fit within this many sigma.' },
      { name: 'minGainDex', type: 'number', default: 0.5, min: 0, description: 'The suggested reading must fit better by at least this many dex.' },
      { name: 'columnFraction', type: 'number', default: 0.5, min: 0, max: 1, description: 'Above this fraction of judged rows, one finding is made for the whole column.' },
      { name: 'relationToleranceDex', type: 'number', default: 0.5, min: 0.05, description: 'Sigma of the mass-luminosity expectation, used where R and Teff are not both known.' },
    ],
    references: [
      { cite: 'IAU 2015 Resolution B3 (L_sun = 3.828e26 W = 3.828e33 erg/s)' },
      { cite: 'Stefan-Boltzmann law with IAU 2015 nominal R_sun and Teff_sun (expected L from R and Teff)' },
      { cite: 'Eker et al. 2018, MNRAS 479, 5491; Tout et al. 1996, MNRAS 281, 257 (expected L from M)' },
    ],
    doc: {
      catches:
        'Luminosities written in watts or erg/s under a solar-units header, a log L pasted into a linear column, a linear L in a log column. Names the likely unit and the corrected value; when most of a column is affected, one finding for the column.',
      why:
        'Unit slips are the commonest luminosity error and the most damaging: watts are 26.58 dex and erg/s 33.58 dex above solar units, a log value is a different number altogether. Each reading of the cell is compared with what the rest of the row implies: 4 pi R^2 sigma Teff^4 where R and Teff are known (0.15 dex tolerance plus their errors), else the main-sequence mass-luminosity relation at its mass (0.5 dex). A reading that fits far better than the declared one is the likely unit. The flagged cell is then withheld from the other rules, so one slip gives one finding.',
      fires:
        'lum_Lsun = 3.9e26 for a star with R = 1.0 R_sun and Teff = 5800 K: as L_sun it is 26.6 dex off; as watts it is 1.02 L_sun, within 0.01 dex of 4 pi R^2 sigma Teff^4 (error; suggests 1.02).',
      silent:
        'lum_Lsun = 2.0 for a 1.2 M_sun star with no radius or Teff: as L_sun it is 0.2 dex from the relation and reading it as log (100 L_sun) fits no better.',
      cautions:
        'Values between about 0.2 and 7 can be read as linear or log; without R and Teff the 0.5 dex mass-luminosity tolerance often cannot tell them apart, and the rule then stays silent. Giants and white dwarfs are judged only through R and Teff, never through the main-sequence relation. A star can be both mistyped and odd; the finding names the most likely reading, not a proof.',
    },
  },
  start(ctx) {
    const fireSigma = ctx.params.fireSigma as number;
    const acceptSigma = ctx.params.acceptSigma as number;
    const minGain = ctx.params.minGainDex as number;
    const columnFraction = ctx.params.columnFraction as number;
    const relTol = ctx.params.relationToleranceDex as number;
    const declaredUnit = ctx.bound.get('luminosity')?.unit ?? 'solLum';
    const declaredIndex = READINGS.findIndex((r) => r.unit === declaredUnit);
    const rel: RelationVerdictInput = { relation: '', logL: NaN, slope: NaN, scatter: NaN, brightAllowance: 0 };
    const firedByUnit = new Array<number>(READINGS.length).fill(0);
    let judged = 0;
    let fired = 0;
    let input = 0;
    let column = '';
    const buffer: Finding[] = [];
    return {
      check(batch, _out, stats) {
        input = batch.input;
        const lum = batch.quantities.luminosity!;
        column = lum.column;
        const raw = lum.raw;
        const radius = batch.quantities.radius ?? null;
        const teff = batch.quantities.teff ?? null;
        const mass = batch.quantities.mass ?? null;
        const classes = starClasses(batch);
        for (let i = 0; i < batch.length; i++) {
          const v = raw[i];
          if (!Number.isFinite(v)) {
            stats.skip('luminosity missing');
            continue;
          }
          const declaredLog = declaredIndex >= 0 ? readingLog(READINGS[declaredIndex], v) : lum.log![i];
          // What the rest of the row implies, and how sure that is.
          let expected = NaN;
          let sigma = NaN;
          // 0: nothing to compare with, 1: Stefan-Boltzmann, 2: mass-luminosity relation. The
          // sentence for the message is only written when the rule fires.
          let basis = 0;
          const r = radius ? radius.value[i] : NaN;
          const t = teff ? teff.value[i] : NaN;
          if (r > 0 && t > 0) {
            const sr = meanErr(radius!.errLo, radius!.errHi, i) / (r * LN10);
            const st = meanErr(teff!.errLo, teff!.errHi, i) / (t * LN10);
            expected = logLuminosityFromRadiusTeff(r, t);
            sigma = Math.sqrt(0.15 * 0.15 + 4 * sr * sr + 16 * st * st);
            basis = 1;
          } else {
            const m = mass ? mass.value[i] : NaN;
            if (m > 0) {
              const cls = classes[i];
              if ((cls === StarClass.MainSequence || cls === StarClass.Unknown) && relationAt('default', m, rel)) {
                expected = rel.logL + rel.brightAllowance / 2;
                sigma = relTol;
                basis = 2;
              }
            }
          }
          stats.checked++;
          judged++;
          let best = -1;
          let bestDist = Infinity;
          let declaredDist: number;
          if (Number.isFinite(expected)) {
            declaredDist = Number.isFinite(declaredLog) ? Math.abs(declaredLog - expected) : Infinity;
            if (Number.isFinite(declaredLog) && declaredDist <= fireSigma * sigma) continue;
            for (let k = 0; k < READINGS.length; k++) {
              if (k === declaredIndex) continue;
              const d = Math.abs(readingLog(READINGS[k], v) - expected);
              if (d < bestDist) {
                bestDist = d;
                best = k;
              }
            }
            if (best < 0 || bestDist > acceptSigma * sigma || declaredDist - bestDist < minGain) continue;
          } else {
            // Nothing else in the row to compare with: only a value no star can have is judged.
            if (declaredLog >= PLAUSIBLE_LOG_MIN && declaredLog <= PLAUSIBLE_LOG_MAX) continue;
            declaredDist = Infinity;
            for (let k = 0; k < READINGS.length; k++) {
              if (k === declaredIndex) continue;
              const lg = readingLog(READINGS[k], v);
              if (lg >= PLAUSIBLE_LOG_MIN && lg <= PLAUSIBLE_LOG_MAX) {
                best = k;
                bestDist = NaN;
                break;
              }
            }
            if (best < 0) continue;
          }
          fired++;
          firedByUnit[best]++;
          markUnusable(batch, 'luminosity', i);
          if (buffer.length >= ROW_BUFFER_CAP) continue;
          const suggestedLog = readingLog(READINGS[best], v);
          const suggested = Math.pow(10, suggestedLog);
          const basisText =
            basis === 1
              ? `4 pi R^2 sigma Teff^4 from R = ${fmt(r)} R_sun and Teff = ${fmt(t)} K`
              : basis === 2
                ? `the main-sequence mass-luminosity relation at M = ${fmt(mass!.value[i])} M_sun`
                : 'the range of luminosities stars have (no R, Teff or main-sequence mass in the row)';
          const asDeclared = Number.isFinite(declaredLog) ? `as ${declaredUnit} it is log L = ${fmt(declaredLog, 3)}` : `it cannot be a linear luminosity`;
          buffer.push(
            rowFinding(batch, i, {
              rule: ID,
              severity: 'error',
              columns: [lum.column],
              values: { [lum.column]: v, likelyUnit: READINGS[best].unit, expectedLogL: round6(expected) },
              expected: Number.isFinite(expected)
                ? { value: round6(Math.pow(10, expected)) ?? undefined, min: round6(Math.pow(10, expected - acceptSigma * sigma)) ?? undefined, max: round6(Math.pow(10, expected + acceptSigma * sigma)) ?? undefined, unit: 'solLum' }
                : null,
              message: `${lum.column} = ${fmt(v)} looks like ${READINGS[best].unit}, not ${declaredUnit}: ${asDeclared}, but ${basisText} gives log L = ${Number.isFinite(expected) ? fmt(expected, 3) : 'a stellar value'}; read as ${READINGS[best].unit} it is ${fmt(suggested)} L_sun${Number.isFinite(bestDist) ? ` (${fmt(bestDist, 2)} dex away)` : ''}`,
              suggestion: {
                column: lum.column,
                value: round6(declaredUnit.startsWith('log') ? suggestedLog : suggested) ?? suggested,
                unit: declaredUnit.startsWith('log') ? 'log(solLum)' : 'solLum',
                text: `${fmt(suggested)} L_sun (the value read as ${READINGS[best].unit})`,
              },
            }),
          );
        }
      },
      finish(out) {
        if (judged >= COLUMN_MIN_ROWS && fired / judged > columnFraction) {
          let top = 0;
          for (let k = 1; k < READINGS.length; k++) if (firedByUnit[k] > firedByUnit[top]) top = k;
          out.push(
            columnFinding({
              input,
              rule: ID,
              severity: 'error',
              columns: [column],
              values: { rowsJudged: judged, rowsInOtherUnit: fired, likelyUnit: READINGS[top].unit, rowsLikelyUnit: firedByUnit[top] },
              message: `column ${column} is declared ${declaredUnit}, but ${fired} of ${judged} judged rows fit another unit far better (${firedByUnit[top]} of them ${READINGS[top].unit}): the column as a whole is likely in ${READINGS[top].unit}`,
              suggestion: { column, value: 1, unit: READINGS[top].unit, text: `declare the column's unit as ${READINGS[top].unit} (e.g. --unit ${column}=${READINGS[top].unit})` },
            }),
          );
          return;
        }
        for (const f of buffer) out.push(f);
        if (fired > buffer.length) {
          out.push(
            columnFinding({
              input,
              rule: ID,
              severity: 'error',
              columns: [column],
              values: { rowsInOtherUnit: fired, rowsListed: buffer.length },
              message: `${fired} rows of ${column} look like another unit; the first ${buffer.length} are listed, ${fired - buffer.length} more are not`,
            }),
          );
        }
      },
      summary() {
        return {
          declaredUnit,
          rowsJudged: judged,
          rowsInOtherUnit: fired,
          byLikelyUnit: Object.fromEntries(READINGS.map((r, k) => [r.unit, firedByUnit[k]]).filter(([, n]) => (n as number) > 0)),
        };
      },
    };
  },
};
