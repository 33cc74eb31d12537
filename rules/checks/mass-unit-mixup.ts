import { fmt } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Rule } from '../engine/types.js';
import { StarClass, starClasses } from '../physics/classify.js';
import { LOGG_SUN } from '../physics/constants.js';
import type { RelationVerdictInput } from '../physics/relation-choice.js';
import { Cell, GRAVITY_FLOOR_DEX, Relation, RowInputs, RowRelations, invertMassLuminosity } from './shared/row-relations.js';
import {
  Expectations,
  LOGG_READINGS,
  MASS_READINGS,
  MIN_MISS_PARAMS,
  MIXUP_PARAMS,
  OtherCell,
  RADIUS_READINGS,
  UnitMixupScreen,
  columnDexErr,
  dexErr,
  meanErr,
  screenRun,
  type ScreenLoop,
  type UnitMixupSpec,
} from './shared/unit-readings.js';

const ID = 'mass-unit-mixup';
const BASIS_GRAVITY = 1;
const BASIS_ML = 2;

const SPEC: UnitMixupSpec = {
  id: ID,
  quantity: 'mass',
  readings: MASS_READINGS,
  canonicalUnit: 'solMass',
  label: 'mass',
  symbol: 'log M',
  expectedKey: 'expectedLogM',
  describe: (lg) => `${fmt(Math.pow(10, lg))} M_sun`,
  // 0.01 M_sun (10 M_Jup, below the deuterium-burning limit) to 350 M_sun (above R136a1's
  // birth mass of about 320; physics-reference.md §6).
  plausibleMin: -2,
  plausibleMax: Math.log10(350),
  typicalLog: 0,
  shiftable: true,
};

/**
 * A mass in kg, g, Jupiter or Earth masses, or a log mass, under a solar-mass header. The cell is
 * read every way and compared with what the row implies: M = g R^2 / G from logg and R, and the
 * main-sequence mass-luminosity relation inverted at the star's L.
 */
export const massUnitMixup: Rule = {
  meta: {
    id: ID,
    title: 'Mass in another unit than its column declares',
    severity: 'error',
    stage: 'screen',
    needs: ['mass'],
    uses: ['logg', 'radius', 'luminosity', 'stage', 'id'],
    params: [
      ...MIXUP_PARAMS,
      ...MIN_MISS_PARAMS,
      {
        name: 'relationToleranceDex',
        type: 'number',
        default: 0.5,
        min: 0.05,
        description: 'Sigma in log L of the mass-luminosity expectation; divided by the local slope for the mass.',
      },
    ],
    references: [
      { cite: 'IAU 2015 Resolution B3 ((GM)_sun, (GM)_Jup, (GM)_Earth nominal; M_Jup/M_sun = 1/1047.566)' },
      { cite: 'CODATA 2018 (G, for kg and g: M_sun = (GM)_sun / G = 1.98841e30 kg)' },
      { cite: 'Eker et al. 2018, MNRAS 479, 5491; Tout et al. 1996, MNRAS 281, 257 (mass from L on the main sequence)' },
    ],
    doc: {
      catches:
        'Masses written in kg, g, Jupiter masses or Earth masses under a solar-mass header, and log M pasted into a linear column. Names the likely unit and the corrected value; when most of a column is affected, one finding for the column.',
      why:
        'kg and g are 30.30 and 33.30 dex above solar masses, Jupiter and Earth masses 3.02 and 5.52 dex (physics-reference.md §9); a planet-mass column mistaken for the host star is the classic case. Each reading of the cell is compared with the mass the row implies: g R^2 / G from logg and R (0.1 dex tolerance plus the errors and the logg scatter of the input\'s first 16384 rows) and, for stars known to be on the main sequence, the mass-luminosity relation inverted at L (0.5 dex in L divided by the local slope). A reading is suggested when its Gaussian likelihood given these expectations is at least minLikelihoodRatio (1000) times that of the declared reading (the finding states how many times); where the declared value is one stars can have (0.01-350 M_sun) the suggestion must also fit every expectation within 3 sigma and the declared value miss by 0.9 dex (1.5 dex where one relation is the only evidence). A power of ten that fits clearly better is left to decimal-shift, unless the input\'s first 16384 rows show that unit on at least 10 rows and 2 % of those judged (the column\'s habit: a column that mixes units says which). The flagged cell is withheld from the judging rules.',
      fires:
        'mass_Msun = 1047.6 for a star with logg 4.44 and R = 1.0 R_sun: as solar masses log M = 3.02, but g R^2 / G gives log M = 0.00; read as Jupiter masses it is 1.0 M_sun (error; suggests 1.0).',
      silent:
        'mass_Msun = 0.6 for a white dwarf with logg 8.0 and R = 0.0125 R_sun: g R^2 / G gives 0.6 M_sun, so the small dense star is judged as it is; no main-sequence relation is applied to it.',
      cautions:
        'A Jupiter-mass reading is 1047.6 times the solar one, close to a slipped decimal point of 1000: this rule claims such cells first, and decimal-shift stays silent on them. With logg and R as the only evidence the rule cannot tell a wrong mass from a wrong radius or logg; where another unit for R or logg would also explain the row it stays silent (counted as ambiguous). Grid-fitted logg (steps of 0.25-0.5 dex) widens the gravity tolerance through the logg scatter of the first rows, so such catalogs are judged more loosely. The mass-luminosity relation is used only where a stage, spectral type or logg says main sequence, so giants, white dwarfs, brown dwarfs and young stars are judged by gravity alone. An M dwarf written in Jupiter masses (84-350) looks like a possible solar mass and needs a 1.5 dex miss with one relation: it gets it (3.02 dex), but a mass a few times off does not, by design.',
    },
  },
  start(ctx) {
    const relTol = ctx.params.relationToleranceDex as number;
    const screen = new UnitMixupScreen(SPEC, ctx.params, ctx.bound.get('mass')?.unit, true, ctx.spill);
    const otherRadius = new OtherCell(RADIUS_READINGS, ctx.bound.get('radius')?.unit);
    const otherLogg = new OtherCell(LOGG_READINGS, ctx.bound.get('logg')?.unit);
    const rel: RelationVerdictInput = { relation: '', logL: NaN, slope: NaN, scatter: NaN, brightAllowance: 0 };
    const e = new Expectations();
    const rr = new RowRelations();
    // The rule's judging of one batch, with the screen it is given: a throwaway one over the
    // input's sample at the start (UnitMixupScreen.learn), then this run's own over every batch.
    const loop: ScreenLoop = (screen, batch, stats) => {
      const mass = batch.quantities.mass!;
      screen.begin(batch, mass.column);
      const raw = mass.raw;
      const radiusCol = batch.quantities.radius ?? null;
      const loggCol = batch.quantities.logg ?? null;
      const r = usableValues(batch, 'radius');
      const g = usableValues(batch, 'logg');
      const l = usableValues(batch, 'luminosity');
      const classes = starClasses(batch);
      const inputs = new RowInputs(batch, classes);
      const scatter = inputs.scatter;
      for (let i = 0; i < batch.length; i++) {
        const v = raw[i];
        if (!screen.admit(batch, i, v, stats)) continue;
        const declaredLog = screen.declaredLog(v, Math.log10(mass.value[i]));
        const own = dexErr(mass.errLo, mass.errHi, mass.value[i], i);
        e.clear();
        const ri = r ? r[i] : NaN;
        const gi = g ? g[i] : NaN;
        const lr = ri > 0 ? Math.log10(ri) : NaN;
        if (Number.isFinite(lr) && Number.isFinite(gi)) {
          const sr = columnDexErr(radiusCol!, i);
          const sg = meanErr(loggCol!.errLo, loggCol!.errHi, i);
          const sigma = Math.sqrt(GRAVITY_FLOOR_DEX ** 2 + scatter * scatter + sg * sg + 4 * sr * sr + own * own);
          e.add(gi - LOGG_SUN + 2 * lr, sigma, BASIS_GRAVITY);
        }
        const li = l ? l[i] : NaN;
        if (li > 0 && classes[i] === StarClass.MainSequence) {
          const lm = invertMassLuminosity(Math.log10(li), rel);
          if (Number.isFinite(lm)) e.add(lm, Math.sqrt((relTol / rel.slope) ** 2 + own * own), BASIS_ML);
        }
        const best = screen.judge(stats, v, declaredLog, e);
        if (best < 0) continue;
        // With g R^2 / G as the only evidence: would R or logg read in another unit explain the
        // row as well? Not where Stefan-Boltzmann vouches for R as written.
        const a = screen.acceptSigma;
        if (e.n === 1 && e.basis[0] === BASIS_GRAVITY) inputs.load(rr, i);
        if (
          e.n === 1 &&
          e.basis[0] === BASIS_GRAVITY &&
          ((!rr.vouches(Cell.Radius, Relation.Gravity, a) && otherRadius.explains(declaredLog, e, a, 2, radiusCol!.raw[i], lr)) ||
            otherLogg.explains(declaredLog, e, a, 1, loggCol!.raw[i], gi))
        ) {
          screen.ambiguous();
          continue;
        }
        const basisText = (j: number) =>
          j < 0
            ? 'the range of masses stars have (no logg and R, or main-sequence L, in the row)'
            : e.basis[j] === BASIS_GRAVITY
              ? `g R^2 / G from logg = ${fmt(gi, 3)} and R = ${fmt(ri)} R_sun`
              : `the main-sequence mass-luminosity relation at L = ${fmt(li)} L_sun`;
        screen.report(batch, i, v, declaredLog, best, e, basisText);
      }
    };
    return screenRun(screen, loop, ctx.sample, () => ({ ...screen.summary(), rowsAmbiguous: screen.ambiguousRows }));
  },
};
