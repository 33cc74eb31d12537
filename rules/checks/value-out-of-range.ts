import { fmt, round6, rowFinding } from '../engine/findings.js';
import { QUANTITY_INFO, type NumericQuantity } from '../engine/quantities.js';
import { usableValues } from '../engine/usable.js';
import type { Batch, ExpectedValue, QuantityColumn, Rule, Severity, Suggestion } from '../engine/types.js';
import {
  CLASS_RANGES,
  DEUTERIUM_BURNING_MASS,
  HYDROGEN_BURNING_MIN_MASS,
  MAX_STELLAR_MASS,
  STAR_CLASS_NAMES,
  STELLAR_LIMITS,
  StarClass,
  classFromText,
  starClasses,
  type ValueRange,
} from '../physics/classify.js';

const ID = 'value-out-of-range';

/** Quantities judged, in the order their findings are written. */
const JUDGED: readonly NumericQuantity[] = ['mass', 'luminosity', 'radius', 'teff', 'logg', 'feh', 'hydrogenFraction', 'distance', 'parallax', 'mbol'];

/** Units for messages. */
const SHOWN_UNIT: Readonly<Record<NumericQuantity, string>> = {
  mass: 'M_sun',
  luminosity: 'L_sun',
  radius: 'R_sun',
  teff: 'K',
  logg: 'dex',
  feh: 'dex',
  hydrogenFraction: '',
  parallax: 'mas',
  distance: 'pc',
  mbol: 'mag',
};

/** Quantities whose negative values are usually log10 values in a linear column (physics-reference.md §9). */
const LOG_PRONE: ReadonlySet<NumericQuantity> = new Set(['mass', 'luminosity', 'radius']);

/** Classes whose stars burn hydrogen, or might: below the hydrogen-burning mass they are brown dwarfs. */
const BURNING: ReadonlySet<number> = new Set([StarClass.Unknown, StarClass.MainSequence, StarClass.Giant]);

/** The cell for a message (written only for values that fire): as written, and canonical where they differ. */
function shown(col: QuantityColumn, i: number, v: number, q: NumericQuantity): string {
  return col.raw[i] === v || q === 'logg' ? `${col.column} = ${withUnit(v, q)}` : `${col.column} = ${fmt(col.raw[i])} (${withUnit(v, q)})`;
}

/** StarClass codes as nouns for messages. */
const CLASS_NOUN = ['a star of unknown class', 'a main-sequence star', 'a giant or subgiant', 'a white dwarf', 'a hot subdwarf', 'a brown dwarf'];

interface Verdict {
  severity: Severity;
  q: NumericQuantity;
  message: string;
  expected: ExpectedValue;
  suggestion: Suggestion | null;
}

const withUnit = (x: number, q: NumericQuantity) => `${fmt(x)}${SHOWN_UNIT[q] ? ` ${SHOWN_UNIT[q]}` : ''}`;
const span = (r: { min: number; max: number }, q: NumericQuantity) => `${fmt(r.min)} to ${withUnit(r.max, q)}`;

/**
 * Values no star can have, and values outside the range of the star's own class. The class comes
 * from the stage or spectral-type text, else from logg, R and Teff (rules/physics/classify.ts), so a
 * white dwarf's logg of 8 or a supergiant's radius of 1000 R_sun is judged against white dwarfs and
 * giants, never against dwarfs.
 */
export const valueOutOfRange: Rule = {
  meta: {
    id: ID,
    title: 'Value outside what stars (or stars of its class) have',
    severity: 'error',
    stage: 'judge',
    needs: [],
    uses: [...JUDGED, 'stage', 'id'],
    params: [
      {
        name: 'sigmas',
        type: 'number',
        default: 3,
        min: 0,
        description: 'A value is out of range only when it stays out at this many uncertainties towards the range.',
      },
      {
        name: 'minMass',
        type: 'number',
        default: HYDROGEN_BURNING_MIN_MASS,
        min: 0,
        description: 'Hydrogen-burning minimum mass (M_sun); below it a star is flagged as a possible brown dwarf (warning).',
      },
      {
        name: 'maxMass',
        type: 'number',
        default: MAX_STELLAR_MASS,
        min: 1,
        description: 'Mass beyond the most massive stars known (M_sun); above it the mass is an error.',
      },
      { name: 'fehMin', type: 'number', default: -5, description: '[Fe/H] below this is flagged (warning); below -10 it is an error.' },
      { name: 'fehMax', type: 'number', default: 1, description: '[Fe/H] above this is flagged (warning); above +2 it is an error.' },
    ],
    references: [
      { cite: 'Chabrier & Baraffe 1997, A&A 327, 1039 (hydrogen-burning minimum mass 0.072-0.083 M_sun)', note: 'values as quoted in physics-reference.md §6, from memory' },
      { cite: 'Crowther et al. 2010, MNRAS 408, 731; Kalari et al. 2022 (R136a1, the most massive star known)', note: 'physics-reference.md §6' },
      { cite: 'Nauenberg 1972, ApJ 175, 417 (cold white-dwarf mass-radius relation: 0.0025 R_sun at 1.4 M_sun, hence logg 9.8)', note: 'formula from memory; values derived in physics-reference.md §6' },
      { cite: 'Pecaut & Mamajek 2013, ApJS 208, 9 and Mamajek\'s dwarf sequence (main-sequence Teff 2330 K at M9.5V to about 45 900 K at O3V)' },
      {
        cite: 'Kepler et al. 2016, MNRAS 455, 3413; Kilic et al. 2007, ApJ 660, 1451 (white-dwarf masses, ELM white dwarfs down to 0.17 M_sun)',
        note: 'values as quoted in physics-reference.md §6; journal pages from memory',
      },
    ],
    doc: {
      catches:
        'Values no star can have (errors): a non-positive mass, luminosity, radius, Teff or distance; a mass beyond the most massive stars known (300 M_sun); logg outside -1.5..9.8, Teff outside 200 K..300 kK, R outside 0.001-3000 R_sun, [Fe/H] outside -10..+2, X outside 0..1 (a negative L, M or R comes with its log10 reading as the suggestion, a negative Teff or distance with the sign flipped). And values outside the range of the star\'s class (warnings): a mass below the hydrogen-burning limit (0.075 M_sun: a brown dwarf?), a main-sequence Teff outside 2300-55 000 K or logg outside 3.5-5.5, white-dwarf masses outside 0.15-1.46 M_sun, a hot subdwarf at 5000 K, [Fe/H] outside -5..+1. One finding per row, naming every value that is out.',
      why:
        'An impossible value is a slip (a sign, a unit, a placeholder such as logg = 10.000) that every later computation inherits. Ranges depend on what the star is: logg 8 is normal for a white dwarf and impossible for a dwarf, 1000 R_sun normal for a red supergiant. Stars are classified first, from the stage or spectral-type column, else from logg (quoted, or from M and R) with Teff and R: logg >= 6.5, or R <= 0.05 R_sun, is a white dwarf; a star hotter than 7000 K with logg >= 5.0 or R <= 0.3 R_sun (and not larger) is compact (a hot subdwarf above 20 kK, else an ELM white dwarf); logg 3.5-5.5 a dwarf; below 3.5, or R >= 30 R_sun, a giant. The upper logg limit 9.8 is that of a 1.4 M_sun white dwarf of 0.0025 R_sun.',
      fires:
        'logg = 10.627 for a DC white dwarf (MWDD): above 9.8, what a white dwarf near the Chandrasekhar mass has (error). Dpc = 0.0 (error). A star labelled M4.0 V with M = 0.022 M_sun: below the hydrogen-burning limit (warning, "a brown dwarf?").',
      silent:
        'A DA white dwarf with logg 8.0 and R = 0.012 R_sun; an ELM white dwarf with M = 0.17 M_sun, logg 5.48 and Teff 11 288 K; a red supergiant with R = 1000 R_sun and logg 0.0; a T dwarf labelled T8.5 at 575 K.',
      cautions:
        'The class ranges are generous summaries, not published limits: main-sequence Teff 2300-55 000 K (55 kK is plausible for O2 and metal-poor stars but not a confirmed limit), R 0.07-30 R_sun; white dwarfs R 0.002-0.15 R_sun (ELM ones are much larger than normal ones), Teff 2500 K-250 kK; hot subdwarfs 15-100 kK, logg 4.5-6.8. A wrong class label makes right values look wrong: the finding then says which label it judged by. Grid logg from SED fits (steps of 0.5 dex) is judged with its stated error. Negative parallaxes are measurements, never flagged as such. Young brown dwarfs labelled with M types and hosts of planets below 0.075 M_sun get the brown-dwarf warning, which is a question, not a verdict.',
    },
  },
  start(ctx) {
    const k = ctx.params.sigmas as number;
    const minMass = ctx.params.minMass as number;
    const maxMass = ctx.params.maxMass as number;
    const fehWarn: ValueRange = { min: ctx.params.fehMin as number, max: ctx.params.fehMax as number, source: 'parameters fehMin/fehMax' };
    const hard: Partial<Record<NumericQuantity, ValueRange>> = { ...STELLAR_LIMITS, mass: { ...STELLAR_LIMITS.mass!, max: maxMass } };
    const firedBy = new Map<string, number>();
    const verdicts: Verdict[] = [];

    /** How the class was decided, for the message. */
    function classText(batch: Batch, i: number, cls: number): string {
      const stage = batch.text.stage?.values[i] ?? null;
      const name = CLASS_NOUN[cls];
      if (cls === StarClass.Unknown) return name;
      return classFromText(stage) === cls ? `${name} (labelled \`${stage}\`)` : `${name} (classed from its logg, R and Teff)`;
    }

    function judge(batch: Batch, i: number, q: NumericQuantity, v: number, cls: number): Verdict | null {
      const col = batch.quantities[q]!;
      const lo = col.errLo && Number.isFinite(col.errLo[i]) ? col.errLo[i] : 0;
      const hi = col.errHi && Number.isFinite(col.errHi[i]) ? col.errHi[i] : 0;
      const unit = QUANTITY_INFO[q].unit;
      const limit = hard[q];
      if (QUANTITY_INFO[q].positive && v <= 0) {
        // For L, M and R a small negative number is most often a log10 pasted into a linear column;
        // for Teff and distance a dropped sign, where the positive value is one stars have.
        const written = col.raw[i];
        const asLog = LOG_PRONE.has(q) && written > -10;
        // The reading in the canonical unit: 10^written in the column's unit, or the sign flipped.
        const reading = asLog ? Math.pow(10, written) * (v / written) : -v;
        const possible = v < 0 && limit !== undefined && reading > limit.min && reading <= limit.max;
        const hint = v === 0 ? ' (a zero is usually a placeholder for a missing value)' : possible ? `; ${asLog ? `read as log10 it is ${withUnit(reading, q)} (a log value in a linear column?)` : `${withUnit(reading, q)} would be a possible value (a dropped sign?)`}` : '';
        return {
          severity: 'error',
          q,
          message: `${shown(col, i, v, q)}: a ${QUANTITY_INFO[q].label} must be positive${hint}`,
          expected: { min: limit && limit.min > 0 ? limit.min : undefined, max: limit?.max, unit },
          suggestion: possible
            ? asLog
              ? { column: col.column, value: round6(Math.pow(10, written)) ?? 0, unit: col.unit, text: `${fmt(Math.pow(10, written))} (10 to the power of the value written)` }
              : { column: col.column, value: -written, unit: col.unit, text: `${fmt(-written)} (the sign dropped)` }
            : null,
        };
      }
      if (limit && (v + k * hi < limit.min || v - k * lo > limit.max)) {
        const above = v > limit.max;
        const round = q === 'logg' && Number.isInteger(v) ? ' (a round value, likely a placeholder)' : '';
        const margin = k > 0 && (above ? lo : hi) > 0 ? ` even at ${k} sigma` : '';
        const what =
          q === 'mass' && above
            ? `beyond the most massive stars known (${withUnit(limit.max, q)})`
            : above
              ? `above ${withUnit(limit.max, q)}, the most any star has${q === 'logg' ? ' (a white dwarf near the Chandrasekhar mass)' : ''}`
              : `below ${withUnit(limit.min, q)}, the least any star has`;
        return {
          severity: 'error',
          q,
          message: `${shown(col, i, v, q)}${round} is ${what}${margin}`,
          expected: { min: limit.min, max: limit.max, unit },
          suggestion: null,
        };
      }
      if (q === 'mass' && BURNING.has(cls) && v + k * hi < minMass) {
        const planetary = v + k * hi < DEUTERIUM_BURNING_MASS;
        return {
          severity: 'warning',
          q,
          message: `${shown(col, i, v, q)} is below the hydrogen-burning limit (${withUnit(minMass, q)}) for ${classText(batch, i, cls)}: ${planetary ? 'below the deuterium-burning limit too, a planetary mass' : 'a brown dwarf'}, or a wrong mass?`,
          expected: { min: minMass, unit },
          suggestion: null,
        };
      }
      const range = q === 'feh' ? fehWarn : CLASS_RANGES[cls as StarClass]?.[q];
      if (range && (v + k * hi < range.min || v - k * lo > range.max)) {
        const above = v > range.max;
        const who = q === 'feh' ? 'known stars' : classText(batch, i, cls);
        const hint =
          q === 'teff' && cls === StarClass.MainSequence && !above
            ? ': cooler than any hydrogen-burning star, a brown dwarf?'
            : q === 'feh'
              ? ''
              : ': the class or the value is wrong';
        return {
          severity: 'warning',
          q,
          message: `${shown(col, i, v, q)} is outside ${span(range, q)} for ${who}${hint}`,
          expected: { min: range.min, max: range.max, unit },
          suggestion: null,
        };
      }
      return null;
    }

    /**
     * Per quantity and class, the span inside which `judge` cannot fire whatever the errors: at or
     * inside every limit that applies (errors only ever move a value towards its range). Nearly
     * every cell falls inside, and is passed over without a call.
     */
    const classCount = STAR_CLASS_NAMES.length;
    const quiet = new Map<NumericQuantity, { lo: Float64Array; hi: Float64Array }>();
    for (const q of JUDGED) {
      const lo = new Float64Array(classCount);
      const hi = new Float64Array(classCount);
      for (let c = 0; c < classCount; c++) {
        const limit = hard[q];
        const range = q === 'feh' ? fehWarn : CLASS_RANGES[c as StarClass]?.[q];
        let a = Math.max(limit?.min ?? -Infinity, range?.min ?? -Infinity);
        if (QUANTITY_INFO[q].positive) a = Math.max(a, Number.MIN_VALUE);
        if (q === 'mass' && BURNING.has(c)) a = Math.max(a, minMass);
        lo[c] = a;
        hi[c] = Math.min(limit?.max ?? Infinity, range?.max ?? Infinity);
      }
      quiet.set(q, { lo, hi });
    }

    return {
      check(batch, out, stats) {
        const present = JUDGED.filter((q) => batch.quantities[q] !== undefined);
        if (present.length === 0) {
          stats.skip('no range-checked quantity bound', batch.length);
          return;
        }
        const values = present.map((q) => usableValues(batch, q)!);
        const quietLo = present.map((q) => quiet.get(q)!.lo);
        const quietHi = present.map((q) => quiet.get(q)!.hi);
        const classes = starClasses(batch);
        for (let i = 0; i < batch.length; i++) {
          let any = false;
          verdicts.length = 0;
          const cls = classes[i];
          for (let j = 0; j < present.length; j++) {
            const v = values[j][i];
            if (v !== v) continue;
            any = true;
            if (v >= quietLo[j][cls] && v <= quietHi[j][cls]) continue;
            const verdict = judge(batch, i, present[j], v, cls);
            if (verdict) verdicts.push(verdict);
          }
          if (!any) {
            stats.skip('all values missing or unusable');
            continue;
          }
          stats.checked++;
          if (verdicts.length === 0) continue;
          // One finding per row: the most severe verdict leads, the others follow in the message.
          verdicts.sort((a, b) => (a.severity === b.severity ? 0 : a.severity === 'error' ? -1 : 1));
          const lead = verdicts[0];
          const rowValues: Record<string, number | string | null> = {};
          for (const vd of verdicts) {
            const col = batch.quantities[vd.q]!;
            rowValues[col.column] = round6(col.raw[i]);
            firedBy.set(vd.q, (firedBy.get(vd.q) ?? 0) + 1);
          }
          rowValues.starClass = STAR_CLASS_NAMES[classes[i]];
          out.push(
            rowFinding(batch, i, {
              rule: ID,
              severity: lead.severity,
              columns: verdicts.map((vd) => batch.quantities[vd.q]!.column),
              values: rowValues,
              expected: lead.expected,
              message: verdicts.map((vd) => vd.message).join('; '),
              suggestion: lead.suggestion ?? verdicts.find((vd) => vd.suggestion)?.suggestion ?? null,
            }),
          );
        }
      },
      save: () => new Map(firedBy),
      absorb(state) {
        for (const [q, n] of state as Map<string, number>) firedBy.set(q, (firedBy.get(q) ?? 0) + n);
      },
      summary() {
        return { rowsOutOfRangeByQuantity: Object.fromEntries(firedBy), maxMass, minMass };
      },
    };
  },
};
