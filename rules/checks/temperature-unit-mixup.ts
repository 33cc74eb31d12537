import { fmt } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Rule } from '../engine/types.js';
import { TEFF_SUN_K } from '../physics/constants.js';
import { starClasses } from '../physics/classify.js';
import { Cell, Relation, RowInputs, RowRelations, SB_FLOOR_DEX } from './shared/row-relations.js';
import {
  Expectations,
  LUMINOSITY_READINGS,
  MIN_MISS_PARAMS,
  MIXUP_PARAMS,
  OtherCell,
  RADIUS_READINGS,
  TEFF_READINGS,
  UnitMixupScreen,
  columnDexErr,
  dexErr,
  screenRun,
  type ScreenLoop,
  type UnitMixupSpec,
} from './shared/unit-readings.js';

const ID = 'temperature-unit-mixup';
const BASIS_SB = 1;
const LOG_TEFF_SUN = Math.log10(TEFF_SUN_K);

const SPEC: UnitMixupSpec = {
  id: ID,
  quantity: 'teff',
  readings: TEFF_READINGS,
  canonicalUnit: 'K',
  label: 'temperature',
  symbol: 'log Teff',
  expectedKey: 'expectedLogTeff',
  describe: (lg) => `${fmt(Math.pow(10, lg))} K`,
  // 200 K (below the coolest Y dwarfs, about 250 K) to 500 000 K (above the hottest white dwarfs and
  // central stars, about 250 000 K); physics-reference.md §6 and from memory.
  plausibleMin: Math.log10(200),
  plausibleMax: Math.log10(5e5),
  shiftable: true,
};

/**
 * log Teff pasted into a kelvin column (3.3-4.8 is log Teff, physics-reference.md §9), Teff in kK,
 * and kelvin in a log column. Judged against Teff from L and R (Stefan-Boltzmann) where both are
 * known, else against the temperatures stars have.
 */
export const temperatureUnitMixup: Rule = {
  meta: {
    id: ID,
    title: 'Effective temperature in another unit than its column declares',
    severity: 'error',
    stage: 'screen',
    needs: ['teff'],
    uses: ['luminosity', 'radius', 'id'],
    params: [...MIXUP_PARAMS, ...MIN_MISS_PARAMS],
    references: [
      { cite: 'IAU 2015 Resolution B3 (nominal Teff_sun = 5772 K, R_sun, L_sun)' },
      { cite: 'Stefan-Boltzmann law, Teff = 5772 K (L / R^2)^(1/4) in nominal solar units' },
    ],
    doc: {
      catches:
        'log Teff written in a kelvin column, Teff in kK, and a kelvin value in a log Teff column. Names the likely unit and the corrected value; one finding for the column when most of it is affected.',
      why:
        'A log Teff of 3.76 read as kelvin is a 3.76 K star, 3.2 dex colder than the Sun; a value in kK is 3 dex low. Where L and R are known, each reading is compared with Teff = 5772 K (L / R^2)^(1/4) (0.0375 dex tolerance, a quarter of the 0.15 dex allowed in L, plus the errors); a reading is suggested when its Gaussian likelihood is at least minLikelihoodRatio (1000) times that of the declared reading (stated in the finding), and, for a declared Teff stars can have, it fits within 3 sigma and the declared value misses by 0.9 dex (1.5 with one relation). Without L and R only a value no star has (below 200 K or above 500 000 K) is judged: 3.3-4.8 is then read as log Teff, other small values as kK. The flagged cell is withheld from the judging rules.',
      fires:
        'teff_K = 3.7613 for a star with L = 1 L_sun and R = 1 R_sun: as kelvin log Teff = 0.575, but Stefan-Boltzmann gives 3.761; read as log(K) it is 5772 K (error; suggests 5772).',
      silent:
        'teff_K = 575 for a T dwarf (WISEP J1217+1626 A, PHL PROVENANCE) or 71 530 K for the hottest MWDD entry: temperatures stars have, so with nothing contradicting them they stand. 11 544 K for the Sun (0.3 dex off Stefan-Boltzmann) is no unit slip either.',
      cautions:
        'Without L and R a value of 3.3-4.8 is taken for log Teff, not kK (a 3.3-4.8 kK star is just as possible; physics-reference.md §9 calls log Teff the near-certain reading), unless the column\'s typical value (the median and spread of its declared values over the input\'s first 16384 rows) lies nearer the kK reading; 4.8-200 is read as kK. A Teff that one slipped decimal place explains clearly better than another unit is left to decimal-shift, unless the input\'s first 16384 rows show that unit on at least 10 rows and 2 % of those judged (the column\'s habit: a column that mixes units says which). Grid Teff (100 K steps) and rapid rotators miss Stefan-Boltzmann by up to 0.1-0.2 dex in Teff, far inside the 3 dex of a unit slip. Where L or R read in another unit would also explain the row, the rule stays silent (counted as ambiguous).',
    },
  },
  start(ctx) {
    const screen = new UnitMixupScreen(SPEC, ctx.params, ctx.bound.get('teff')?.unit, true, ctx.spill);
    const otherLum = new OtherCell(LUMINOSITY_READINGS, ctx.bound.get('luminosity')?.unit);
    const otherRadius = new OtherCell(RADIUS_READINGS, ctx.bound.get('radius')?.unit);
    const e = new Expectations();
    const rr = new RowRelations();
    // The rule's judging of one batch, with the screen it is given: a throwaway one over the
    // input's sample at the start (UnitMixupScreen.learn), then this run's own over every batch.
    const loop: ScreenLoop = (screen, batch, stats) => {
      const teff = batch.quantities.teff!;
      screen.begin(batch, teff.column);
      const raw = teff.raw;
      const q = batch.quantities;
      const l = usableValues(batch, 'luminosity');
      const r = usableValues(batch, 'radius');
      const inputs = new RowInputs(batch, starClasses(batch));
      for (let i = 0; i < batch.length; i++) {
        const v = raw[i];
        if (!screen.admit(batch, i, v, stats)) continue;
        const declaredLog = screen.declaredLog(v, Math.log10(teff.value[i]));
        e.clear();
        const li = l ? l[i] : NaN;
        const ri = r ? r[i] : NaN;
        const ll = li > 0 ? Math.log10(li) : NaN;
        const lr = ri > 0 ? Math.log10(ri) : NaN;
        if (Number.isFinite(ll) && Number.isFinite(lr)) {
          const sl = columnDexErr(q.luminosity!, i);
          const sr = columnDexErr(q.radius!, i);
          const own = dexErr(teff.errLo, teff.errHi, teff.value[i], i);
          const sigma = Math.sqrt((SB_FLOOR_DEX / 4) ** 2 + (sl / 4) ** 2 + (sr / 2) ** 2 + own * own);
          e.add(LOG_TEFF_SUN + 0.25 * ll - 0.5 * lr, sigma, BASIS_SB);
        }
        const best = screen.judge(stats, v, declaredLog, e);
        if (best < 0) continue;
        const a = screen.acceptSigma;
        // Would L or R read in another unit explain the row as well? Not where another relation
        // vouches for that cell as written.
        inputs.load(rr, i);
        if (
          (!rr.vouches(Cell.Luminosity, Relation.StefanBoltzmann, a) && otherLum.explains(declaredLog, e, a, 0.25, q.luminosity?.raw[i] ?? NaN, ll)) ||
          (!rr.vouches(Cell.Radius, Relation.StefanBoltzmann, a) && otherRadius.explains(declaredLog, e, a, -0.5, q.radius?.raw[i] ?? NaN, lr))
        ) {
          screen.ambiguous();
          continue;
        }
        const basisText = (j: number) =>
          j < 0 ? 'the range of temperatures stars have (no L and R in the row)' : `Stefan-Boltzmann from L = ${fmt(li)} L_sun and R = ${fmt(ri)} R_sun`;
        screen.report(batch, i, v, declaredLog, best, e, basisText);
      }
    };
    return screenRun(screen, loop, ctx.sample, () => ({ ...screen.summary(), rowsAmbiguous: screen.ambiguousRows }));
  },
};
