import { fmt, round6 } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Rule } from '../engine/types.js';
import { LOGG_SUN } from '../physics/constants.js';
import { starClasses } from '../physics/classify.js';
import { Cell, GRAVITY_FLOOR_DEX, Relation, RowInputs, RowRelations, gravityScatter } from './shared/row-relations.js';
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
  meanErr,
  type ScreenLoop,
  type ScreenState,
  type UnitMixupSpec,
} from './shared/unit-readings.js';

const ID = 'gravity-unit-mixup';
const BASIS_GRAVITY = 1;

const SPEC: UnitMixupSpec = {
  id: ID,
  quantity: 'logg',
  readings: LOGG_READINGS,
  canonicalUnit: 'log(cm.s-2)',
  canonicalIsLog: true,
  label: 'log g',
  symbol: 'logg',
  expectedKey: 'expectedLogg',
  describe: (lg) => `logg = ${fmt(lg, 3)} (cgs)`,
  // Supergiants reach about -1, the densest white dwarfs about 9.5 (physics-reference.md §6).
  plausibleMin: -1.5,
  plausibleMax: 9.7,
};

/**
 * log g in SI (m s^-2) under a cgs header, 2 dex low (physics-reference.md §9), and a linear g in
 * either system in a log column. Judged against 4.438 + log M - 2 log R where M and R are known.
 */
export const gravityUnitMixup: Rule = {
  meta: {
    id: ID,
    title: 'Surface gravity in SI or linear under a log cgs header',
    severity: 'error',
    stage: 'screen',
    needs: ['logg'],
    uses: ['mass', 'radius', 'id'],
    params: [...MIXUP_PARAMS, ...MIN_MISS_PARAMS],
    references: [
      { cite: 'IAU 2015 Resolution B3 ((GM)_sun, R_sun nominal: logg_sun = 4.438 in cgs)' },
      { cite: 'Newtonian surface gravity g = GM/R^2; 1 m s^-2 = 100 cm s^-2' },
    ],
    doc: {
      catches:
        'log g given in SI (log m s^-2) in a column that declares cgs, and a linear g (in cm s^-2 or m s^-2) in a log g column. Names the likely unit and the cgs log g.',
      why:
        'The same star has log g 2 dex lower in SI than in cgs: the Sun shows 2.44 in SI, which looks like a giant (physics-reference.md §9). Where M and R are known each reading is compared with logg = 4.438 + log M - 2 log R (0.1 dex tolerance, physics-reference.md T9, plus the errors and the robust logg scatter of the input\'s first 16384 rows); a reading is suggested when its Gaussian likelihood given that expectation is at least minLikelihoodRatio (1000) times that of the declared reading, and (for a declared value stars can have) it fits within 3 sigma and the declared value misses by 0.9 dex (1.5 with one relation); the finding states the ratio. Without M and R only a value no log g has (above 9.7 or below -1.5) is judged, which catches linear g, read in the unit nearest the column\'s typical value (the median and spread of its declared values over the input\'s first 16384 rows). The flagged cell is withheld from the judging rules.',
      fires:
        'logg = 2.438 for a star with M = 1 M_sun and R = 1 R_sun: M and R give 4.438 in cgs; read as log(m.s-2) it is 4.438 (error; suggests 4.438).',
      silent:
        'logg = 2.5 for a CARMENES M dwarf whose SED-fit logg is on a 0.5 dex grid: the catalog\'s logg scatters by about 0.5 dex around M/R^2 over its first 16384 rows, so a 2 dex gap is no evidence of SI there, and surface-gravity-mismatch judges the row with its stated error.',
      cautions:
        'A real giant with a wrong M or R can look like an SI dwarf; the rule needs M and R to call SI and stays silent where the mass or radius itself would explain the gap in another unit (counted as ambiguous). Catalogs whose logg disagrees with M/R^2 by a dex or more on many rows (grid fits) are judged with that scatter added, so SI rows hidden among them are missed. A giant mistaken for SI would need M and R pointing to a dwarf.',
    },
  },
  start(ctx) {
    const screen = new UnitMixupScreen(SPEC, ctx.params, ctx.bound.get('logg')?.unit, true, ctx.spill);
    const otherMass = new OtherCell(MASS_READINGS, ctx.bound.get('mass')?.unit);
    const otherRadius = new OtherCell(RADIUS_READINGS, ctx.bound.get('radius')?.unit);
    const e = new Expectations();
    const rr = new RowRelations();
    let scatterMax = 0;
    // The rule's judging of one batch, with the screen it is given: a throwaway one over the
    // input's sample at the start (UnitMixupScreen.learn), then this run's own over every batch.
    const loop: ScreenLoop = (screen, batch, stats) => {
      const logg = batch.quantities.logg!;
      screen.begin(batch, logg.column);
      const raw = logg.raw;
      const q = batch.quantities;
      const m = usableValues(batch, 'mass');
      const r = usableValues(batch, 'radius');
      const inputs = new RowInputs(batch, starClasses(batch));
      const scatter = inputs.scatter;
      for (let i = 0; i < batch.length; i++) {
        const v = raw[i];
        if (!screen.admit(batch, i, v, stats)) continue;
        const declaredLog = screen.declaredLog(v, logg.value[i]);
        e.clear();
        const mi = m ? m[i] : NaN;
        const ri = r ? r[i] : NaN;
        const lm = mi > 0 ? Math.log10(mi) : NaN;
        const lr = ri > 0 ? Math.log10(ri) : NaN;
        if (Number.isFinite(lm) && Number.isFinite(lr)) {
          const sm = columnDexErr(q.mass!, i);
          const sr = columnDexErr(q.radius!, i);
          const sg = meanErr(logg.errLo, logg.errHi, i);
          const sigma = Math.sqrt(GRAVITY_FLOOR_DEX ** 2 + scatter * scatter + sm * sm + 4 * sr * sr + sg * sg);
          e.add(LOGG_SUN + lm - 2 * lr, sigma, BASIS_GRAVITY);
        }
        const best = screen.judge(stats, v, declaredLog, e);
        if (best < 0) continue;
        const a = screen.acceptSigma;
        // Would M or R read in another unit explain the row as well? Not where another relation
        // vouches for that cell as written.
        inputs.load(rr, i);
        if (
          (!rr.vouches(Cell.Mass, Relation.Gravity, a) && otherMass.explains(declaredLog, e, a, 1, q.mass?.raw[i] ?? NaN, lm)) ||
          (!rr.vouches(Cell.Radius, Relation.Gravity, a) && otherRadius.explains(declaredLog, e, a, -2, q.radius?.raw[i] ?? NaN, lr))
        ) {
          screen.ambiguous();
          continue;
        }
        const basisText = (j: number) =>
          j < 0 ? 'the range of log g stars have (no M and R in the row)' : `M = ${fmt(mi)} M_sun and R = ${fmt(ri)} R_sun`;
        screen.report(batch, i, v, declaredLog, best, e, basisText);
      }
    };
    screen.learn(ctx.sample, loop);
    return {
      check(batch, _out, stats) {
        screen.learn(batch, loop);
        scatterMax = Math.max(scatterMax, gravityScatter(batch));
        loop(screen, batch, stats);
      },
      finish(out) {
        screen.finish(out);
      },
      summary() {
        return { ...screen.summary(), rowsAmbiguous: screen.ambiguousRows, batchLoggScatterDexMax: round6(scatterMax) };
      },
      save() {
        return { screen: screen.save(), scatterMax };
      },
      absorb(state, shift) {
        const s = state as { screen: ScreenState; scatterMax: number };
        screen.absorb(s.screen, shift);
        if (s.scatterMax > scatterMax) scatterMax = s.scatterMax;
      },
    };
  },
};
