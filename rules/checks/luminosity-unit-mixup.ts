import { fmt } from '../engine/findings.js';
import type { Rule } from '../engine/types.js';
import { StarClass, starClasses } from '../physics/classify.js';
import { relationAt, type RelationVerdictInput } from '../physics/relation-choice.js';
import { logLuminosityFromRadiusTeff } from '../physics/stellar.js';
import {
  Expectations,
  LUMINOSITY_READINGS,
  MIXUP_PARAMS,
  UnitMixupScreen,
  meanErr,
  screenRun,
  type ScreenLoop,
  type UnitMixupSpec,
} from './shared/unit-readings.js';

const ID = 'luminosity-unit-mixup';
const LN10 = Math.LN10;

/** Bases of the expectation, for the message: Stefan-Boltzmann, the mass-luminosity relation. */
const BASIS_SB = 1;
const BASIS_ML = 2;

const SPEC: UnitMixupSpec = {
  id: ID,
  quantity: 'luminosity',
  readings: LUMINOSITY_READINGS,
  canonicalUnit: 'solLum',
  label: 'luminosity',
  symbol: 'log L',
  expectedKey: 'expectedLogL',
  describe: (lg) => `${fmt(Math.pow(10, lg))} L_sun`,
  // Luminosities real stars have, in log L_sun: brown-dwarf boundary to beyond the brightest known.
  plausibleMin: -6,
  plausibleMax: 7.5,
  shiftable: true,
};

export const luminosityUnitMixup: Rule = {
  meta: {
    id: ID,
    title: 'Luminosity in another unit than its column declares',
    severity: 'error',
    stage: 'screen',
    needs: ['luminosity'],
    uses: ['radius', 'teff', 'mass', 'logg', 'stage', 'id'],
    params: [
      ...MIXUP_PARAMS,
      {
        name: 'minMissDex',
        type: 'number',
        default: 0.75,
        min: 0,
        description: 'A declared luminosity that stars can have must miss what the row implies by at least this many dex.',
      },
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
        'Unit slips are the commonest luminosity error and the most damaging: watts are 26.58 dex and erg/s 33.58 dex above solar units, a log value is a different number altogether. Each reading of the cell is compared with what the rest of the row implies: 4 pi R^2 sigma Teff^4 where R and Teff are known (0.15 dex tolerance plus their errors), else the main-sequence mass-luminosity relation at its mass (0.5 dex). The reading whose Gaussian likelihood is at least minLikelihoodRatio (1000) times that of the declared one is the likely unit, and the finding states the ratio; where the declared value is one stars can have, the reading must also fit within 3 sigma and the declared value miss by 0.75 dex. A value no star can have, with nothing in the row to weigh the readings, is read in the unit nearest the column\'s typical value (the median and spread of its declared values over the input\'s first 16384 rows). The flagged cell is then withheld from the other rules, so one slip gives one finding.',
      fires:
        'lum_Lsun = 3.9e26 for a star with R = 1.0 R_sun and Teff = 5800 K: as L_sun it is 26.6 dex off; as watts it is 1.02 L_sun, within 0.01 dex of 4 pi R^2 sigma Teff^4 (error; suggests 1.02).',
      silent:
        'lum_Lsun = 2.0 for a 1.2 M_sun star with no radius or Teff: as L_sun it is 0.2 dex from the relation and reading it as log (100 L_sun) fits no better.',
      cautions:
        'Values between about 0.2 and 7 can be read as linear or log; without R and Teff the 0.5 dex mass-luminosity tolerance often cannot tell them apart, and the rule then stays silent. The likelihood ratio assumes Gaussian residuals; real catalogs have heavier tails (the summary reports the share beyond 3 sigma), so a ratio of 1000 is weaker evidence than it reads, which is why a plausible declared value must also miss by 0.75 dex. A luminosity that one slipped decimal place explains clearly better than another unit is left to decimal-shift, unless the input\'s first 16384 rows show that unit on at least 10 rows and 2 % of those judged (the column\'s habit: a column that mixes units says which). In a log L column a super-Eddington log L near 5-6 is also a plausible linear luminosity, and is read as one where that fits the row. Giants and white dwarfs are judged only through R and Teff, never through the main-sequence relation. A star can be both mistyped and odd; the finding names the most likely reading, not a proof.',
    },
  },
  start(ctx) {
    const relTol = ctx.params.relationToleranceDex as number;
    const screen = new UnitMixupScreen(SPEC, ctx.params, ctx.bound.get('luminosity')?.unit ?? 'solLum', true, ctx.spill);
    const rel: RelationVerdictInput = { relation: '', logL: NaN, slope: NaN, scatter: NaN, brightAllowance: 0 };
    const e = new Expectations();
    // The rule's judging of one batch, with the screen it is given: a throwaway one over the
    // input's sample at the start (UnitMixupScreen.learn), then this run's own over every batch.
    const loop: ScreenLoop = (screen, batch, stats) => {
      const lum = batch.quantities.luminosity!;
      screen.begin(batch, lum.column);
      const raw = lum.raw;
      const radius = batch.quantities.radius ?? null;
      const teff = batch.quantities.teff ?? null;
      const mass = batch.quantities.mass ?? null;
      const classes = starClasses(batch);
      for (let i = 0; i < batch.length; i++) {
        const v = raw[i];
        if (!screen.admit(batch, i, v, stats)) continue;
        const declaredLog = screen.declaredLog(v, lum.log![i]);
        // What the rest of the row implies, and how sure that is: 4 pi R^2 sigma Teff^4 where R
        // and Teff are known, else the main-sequence mass-luminosity relation.
        e.clear();
        const r = radius ? radius.value[i] : NaN;
        const t = teff ? teff.value[i] : NaN;
        if (r > 0 && t > 0) {
          const sr = meanErr(radius!.errLo, radius!.errHi, i) / (r * LN10);
          const st = meanErr(teff!.errLo, teff!.errHi, i) / (t * LN10);
          e.add(logLuminosityFromRadiusTeff(r, t), Math.sqrt(0.15 * 0.15 + 4 * sr * sr + 16 * st * st), BASIS_SB);
        } else {
          const m = mass ? mass.value[i] : NaN;
          if (m > 0) {
            const cls = classes[i];
            if ((cls === StarClass.MainSequence || cls === StarClass.Unknown) && relationAt('default', m, rel)) {
              e.add(rel.logL + rel.brightAllowance / 2, relTol, BASIS_ML);
            }
          }
        }
        const best = screen.judge(stats, v, declaredLog, e);
        if (best < 0) continue;
        // The sentence for the message is only written when the rule fires.
        const basisText = (j: number) =>
          j < 0
            ? 'the range of luminosities stars have (no R, Teff or main-sequence mass in the row)'
            : e.basis[j] === BASIS_SB
              ? `4 pi R^2 sigma Teff^4 from R = ${fmt(r)} R_sun and Teff = ${fmt(t)} K`
              : `the main-sequence mass-luminosity relation at M = ${fmt(mass!.value[i])} M_sun`;
        screen.report(batch, i, v, declaredLog, best, e, basisText);
      }
    };
    return screenRun(screen, loop, ctx.sample);
  },
};
