import { fmt } from '../engine/findings.js';
import { usableValues } from '../engine/usable.js';
import type { Rule } from '../engine/types.js';
import { LOGG_SUN, TEFF_SUN_K } from '../physics/constants.js';
import { starClasses } from '../physics/classify.js';
import { Cell, GRAVITY_FLOOR_DEX, Relation, RowInputs, RowRelations, SB_FLOOR_DEX } from './shared/row-relations.js';
import {
  Expectations,
  LOGG_READINGS,
  LUMINOSITY_READINGS,
  MASS_READINGS,
  MIN_MISS_PARAMS,
  MIXUP_PARAMS,
  OtherCell,
  RADIUS_READINGS,
  TEFF_READINGS,
  UnitMixupScreen,
  columnDexErr,
  dexErr,
  meanErr,
  screenRun,
  type ScreenLoop,
  type UnitMixupSpec,
} from './shared/unit-readings.js';

const ID = 'radius-unit-mixup';
const BASIS_SB = 1;
const BASIS_GRAVITY = 2;
const LOG_TEFF_SUN = Math.log10(TEFF_SUN_K);

const SPEC: UnitMixupSpec = {
  id: ID,
  quantity: 'radius',
  readings: RADIUS_READINGS,
  canonicalUnit: 'solRad',
  label: 'radius',
  symbol: 'log R',
  expectedKey: 'expectedLogR',
  describe: (lg) => `${fmt(Math.pow(10, lg))} R_sun`,
  // 0.002 R_sun (the most massive white dwarfs, physics-reference.md §6) to 3000 R_sun (beyond the
  // largest red supergiants, about 2000 R_sun; from memory).
  plausibleMin: Math.log10(0.002),
  plausibleMax: Math.log10(3000),
  typicalLog: 0,
  shiftable: true,
};

/**
 * A radius in km, m, cm, Earth or Jupiter radii, au, or a log radius, under a solar-radius header.
 * Each reading is compared with R from L and Teff (Stefan-Boltzmann) and from M and logg (gravity).
 */
export const radiusUnitMixup: Rule = {
  meta: {
    id: ID,
    title: 'Radius in another unit than its column declares',
    severity: 'error',
    stage: 'screen',
    needs: ['radius'],
    uses: ['luminosity', 'teff', 'mass', 'logg', 'id'],
    params: [...MIXUP_PARAMS, ...MIN_MISS_PARAMS],
    references: [
      { cite: 'IAU 2015 Resolution B3 (nominal R_sun = 6.957e8 m; nominal equatorial R_Jup and R_Earth)' },
      { cite: 'IAU 2012 Resolution B2 (au = 149 597 870 700 m)' },
      { cite: 'Stefan-Boltzmann law and g = GM/R^2 with IAU 2015 nominal solar values (expected R)' },
    ],
    doc: {
      catches:
        'Radii written in km, m, cm, Earth radii, Jupiter radii or au under a solar-radius header, and log R pasted into a linear column. Names the likely unit and the corrected value; one finding for the column when most of it is affected.',
      why:
        'km, m and cm are 5.84, 8.84 and 10.84 dex above solar radii, Earth and Jupiter radii 2.04 and 0.99 dex, the au 2.33 dex below (physics-reference.md §9). The row implies a radius twice over: R = sqrt(L / (4 pi sigma Teff^4)) (0.075 dex tolerance, half the 0.15 dex luminosity-unit-mixup allows in L, plus the errors) and R = sqrt(GM / g) (half of 0.1 dex plus the errors and the logg scatter of the input\'s first 16384 rows). A reading is suggested when its Gaussian likelihood given these expectations is at least minLikelihoodRatio (1000) times that of the declared reading (the finding states how many times); where the declared value is one stars can have (0.002-3000 R_sun) the suggestion must also fit every expectation within 3 sigma and the declared value miss by 0.9 dex, or 1.5 dex where one relation is the only evidence. A power of ten that fits clearly better is left to decimal-shift, unless the input\'s first 16384 rows show that unit on at least 10 rows and 2 % of those judged (the column\'s habit: a column that mixes units says which). The flagged cell is withheld from the judging rules.',
      fires:
        'radius_Rsun = 695700 for a star with L = 1 L_sun and Teff = 5772 K: as solar radii log R = 5.84, but Stefan-Boltzmann gives log R = 0.00; read as km it is 1.0 R_sun (error; suggests 1.0).',
      silent:
        'radius_Rsun = 0.008098 for Sirius B (M = 1.018 M_sun, logg 8.63, L = 0.02448 L_sun, Teff 25 370 K; physics-reference.md §6): both relations give 0.0081 R_sun, a real white-dwarf radius, not a value in km.',
      cautions:
        'A Jupiter-radius reading is 9.73 times the solar one and an Earth-radius reading 109 times, close to slipped decimal points of 10 and 100: this rule claims such cells first, so a radius typed ten times too large may be reported as Jupiter radii. With one relation only, a Jupiter-radius slip (0.99 dex) is below the 1.5 dex floor and is not called; it needs both Stefan-Boltzmann and gravity. A white dwarf radius of 0.9-2.2 could be in Earth radii; without L, Teff or logg the rule cannot tell and stays silent. Rapid rotators and grid Teff miss Stefan-Boltzmann by up to 0.2-0.5 dex, well inside the 0.99 dex of the nearest unit. Where one relation is the only evidence and another cell of it read in another unit would also explain the row, the rule stays silent (counted as ambiguous).',
    },
  },
  start(ctx) {
    const screen = new UnitMixupScreen(SPEC, ctx.params, ctx.bound.get('radius')?.unit, true, ctx.spill);
    const other = {
      lum: new OtherCell(LUMINOSITY_READINGS, ctx.bound.get('luminosity')?.unit),
      teff: new OtherCell(TEFF_READINGS, ctx.bound.get('teff')?.unit),
      mass: new OtherCell(MASS_READINGS, ctx.bound.get('mass')?.unit),
      logg: new OtherCell(LOGG_READINGS, ctx.bound.get('logg')?.unit),
    };
    const e = new Expectations();
    const rr = new RowRelations();
    // The rule's judging of one batch, with the screen it is given: a throwaway one over the
    // input's sample at the start (UnitMixupScreen.learn), then this run's own over every batch.
    const loop: ScreenLoop = (screen, batch, stats) => {
      const radius = batch.quantities.radius!;
      screen.begin(batch, radius.column);
      const raw = radius.raw;
      const q = batch.quantities;
      const l = usableValues(batch, 'luminosity');
      const t = usableValues(batch, 'teff');
      const m = usableValues(batch, 'mass');
      const g = usableValues(batch, 'logg');
      const inputs = new RowInputs(batch, starClasses(batch));
      const scatter = inputs.scatter;
      for (let i = 0; i < batch.length; i++) {
        const v = raw[i];
        if (!screen.admit(batch, i, v, stats)) continue;
        const declaredLog = screen.declaredLog(v, Math.log10(radius.value[i]));
        const own = dexErr(radius.errLo, radius.errHi, radius.value[i], i);
        e.clear();
        const li = l ? l[i] : NaN;
        const ti = t ? t[i] : NaN;
        const ll = li > 0 ? Math.log10(li) : NaN;
        const lt = ti > 0 ? Math.log10(ti) : NaN;
        if (Number.isFinite(ll) && Number.isFinite(lt)) {
          const sl = columnDexErr(q.luminosity!, i);
          const st = columnDexErr(q.teff!, i);
          const sigma = Math.sqrt((SB_FLOOR_DEX / 2) ** 2 + (sl / 2) ** 2 + 4 * st * st + own * own);
          e.add(0.5 * ll - 2 * (lt - LOG_TEFF_SUN), sigma, BASIS_SB);
        }
        const mi = m ? m[i] : NaN;
        const gi = g ? g[i] : NaN;
        const lm = mi > 0 ? Math.log10(mi) : NaN;
        if (Number.isFinite(lm) && Number.isFinite(gi)) {
          const sm = columnDexErr(q.mass!, i);
          const sg = meanErr(q.logg!.errLo, q.logg!.errHi, i);
          const sigma = Math.sqrt((GRAVITY_FLOOR_DEX ** 2 + scatter * scatter + sg * sg + sm * sm) / 4 + own * own);
          e.add(0.5 * (lm - gi + LOGG_SUN), sigma, BASIS_GRAVITY);
        }
        const best = screen.judge(stats, v, declaredLog, e);
        if (best < 0) continue;
        const a = screen.acceptSigma;
        // With one relation as the only evidence: would a neighbour read in another unit explain
        // the row as well? Not where another relation vouches for that neighbour as written.
        let unclear = false;
        if (e.n === 1) {
          inputs.load(rr, i);
          const sb = e.basis[0] === BASIS_SB;
          const rel = sb ? Relation.StefanBoltzmann : Relation.Gravity;
          const doubt = (cell: Cell) => !rr.vouches(cell, rel, a);
          unclear = sb
            ? (doubt(Cell.Luminosity) && other.lum.explains(declaredLog, e, a, 0.5, q.luminosity!.raw[i], ll)) || other.teff.explains(declaredLog, e, a, -2, q.teff!.raw[i], lt)
            : (doubt(Cell.Mass) && other.mass.explains(declaredLog, e, a, 0.5, q.mass!.raw[i], lm)) || other.logg.explains(declaredLog, e, a, -0.5, q.logg!.raw[i], gi);
        }
        if (unclear) {
          screen.ambiguous();
          continue;
        }
        const basisText = (j: number) =>
          j < 0
            ? 'the range of radii stars have (no L and Teff, or M and logg, in the row)'
            : e.basis[j] === BASIS_SB
              ? `Stefan-Boltzmann from L = ${fmt(li)} L_sun and Teff = ${fmt(ti)} K`
              : `sqrt(GM / g) from M = ${fmt(mi)} M_sun and logg = ${fmt(gi, 3)}`;
        screen.report(batch, i, v, declaredLog, best, e, basisText);
      }
    };
    return screenRun(screen, loop, ctx.sample, () => ({ ...screen.summary(), rowsAmbiguous: screen.ambiguousRows }));
  },
};
