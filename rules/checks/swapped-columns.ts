import { fmt, round6, rowFinding } from '../engine/findings.js';
import { QUANTITY_INFO, type NumericQuantity } from '../engine/quantities.js';
import { isUnusable, markUnusable } from '../engine/usable.js';
import type { Batch, Rule } from '../engine/types.js';
import { starClasses } from '../physics/classify.js';
import { Cell, Relation, ROW_FIT_PARAMS, ROW_RELATION_REFERENCES, RowInputs, RowRelations, relationNames } from './shared/row-relations.js';

const ID = 'swapped-columns';
/**
 * Mass and radius within 0.2 dex (a factor 1.6) of each other are not called swapped: exchanging them moves the
 * row by less than the scatter of the relations that judge it, so an odd star would be read as a
 * typing slip (seen on synthetic stars 1 dex off the mass-luminosity relation).
 */
const MIN_SWAP_DEX = 0.2;

/** Values no star has as written, and the ranges the swapped values must fall in (canonical units). */
const TEFF_MAX_AS_LOGG = 100; // a Teff cell below 100 K holds no temperature (coolest Y dwarfs about 250 K)
const LOGG_MIN_AS_TEFF = 100; // a logg cell above 100 holds no log g (densest white dwarfs about 9.5)
const TEFF_RANGE: readonly [number, number] = [200, 5e5];
const LOGG_RANGE: readonly [number, number] = [-1.5, 9.7];

/** Linear quantities whose value and error may be exchanged, with the Cell each feeds. */
const ERROR_SWAP: readonly { q: NumericQuantity; cell: Cell; unit: string }[] = [
  { q: 'mass', cell: Cell.Mass, unit: 'M_sun' },
  { q: 'radius', cell: Cell.Radius, unit: 'R_sun' },
  { q: 'luminosity', cell: Cell.Luminosity, unit: 'L_sun' },
  { q: 'teff', cell: Cell.Teff, unit: 'K' },
];

/**
 * Two cells of one row exchanged: mass and radius, Teff and logg, a value and its uncertainty.
 * The swap is suggested only when the row as written clearly breaks the relations that tie its
 * values (Stefan-Boltzmann, g = GM/R^2, the main-sequence mass-luminosity relation) and the
 * swapped row satisfies them.
 */
export const swappedColumns: Rule = {
  meta: {
    id: ID,
    title: 'Two values of a row exchanged',
    severity: 'error',
    stage: 'screen',
    needs: [],
    uses: ['mass', 'radius', 'luminosity', 'teff', 'logg', 'stage', 'id'],
    params: ROW_FIT_PARAMS,
    references: ROW_RELATION_REFERENCES,
    doc: {
      catches:
        'Rows where two fields were typed into each other\'s columns: mass and radius, Teff and logg, or a value and its uncertainty. Suggests the swap and withholds both cells from the judging rules.',
      why:
        'A swap leaves every value plausible on its own and breaks the row as a whole, so it shows only through the relations that tie the values: a subgiant of 1.2 M_sun and 2.0 R_sun written as M = 2.0, R = 1.2 misses g = GM/R^2 by 0.67 dex and Stefan-Boltzmann by 0.44 dex, and swapping M and R makes both exact. An M/R swap is only judged where the relations test both cells (gravity, or Stefan-Boltzmann together with the main-sequence mass-luminosity relation). The row as written must miss its relations (0.15 dex for Stefan-Boltzmann, 0.1 dex plus the logg scatter of the input\'s first 16384 rows for gravity, the measured scatter for the mass-luminosity relation, each with the row\'s errors) by more than fireSigma, and the swapped row fit all within acceptSigma. Teff and logg are recognised also without relations: a Teff below 100 K beside a logg above 100 cannot be anything else. A value smaller than its own error is swapped when the swapped value makes the row consistent.',
      fires:
        'mass_Msun = 2.0, radius_Rsun = 1.2 with logg 3.915, L = 4.08 L_sun and Teff 5800 K: as written g = GM/R^2 gives 4.58 (0.67 dex, 6.7 sigma off); swapped (M = 1.2, R = 2.0) gravity and Stefan-Boltzmann both fit exactly (error; suggests mass_Msun = 1.2). teff_K = 4.438 beside logg = 5772 is swapped too.',
      silent:
        'mass_Msun = 1.0, radius_Rsun = 1.0 for the Sun: swapping changes nothing and the row is consistent. A 1.2 M_sun giant with R = 10 R_sun and logg 2.5 fits as written.',
      cautions:
        'A swap is only as good as the relations that judge it: a row with logg as its only link between M and R can be fitted by a swap by coincidence where its logg is poor (grid-fitted logg adds the column\'s scatter over the first 16384 rows to the tolerance, which guards against this). Stars with M close to R (the Sun, M dwarfs) cannot show a swap and are never flagged. Errors exchanged with their values are judged only for linear columns with symmetric errors.',
    },
  },
  start(ctx) {
    const fire = ctx.params.fireSigma as number;
    const accept = ctx.params.acceptSigma as number;
    const rr = new RowRelations();
    const counts = { massRadius: 0, teffLogg: 0, valueError: 0 };
    return {
      check(batch, out, stats) {
        const q = batch.quantities;
        const inputs = new RowInputs(batch, starClasses(batch));
        const mass = q.mass ?? null;
        const radius = q.radius ?? null;
        const teff = q.teff ?? null;
        const logg = q.logg ?? null;
        for (let i = 0; i < batch.length; i++) {
          inputs.load(rr, i);
          const bits = rr.available();
          const tv = inputs.teff ? inputs.teff[i] : NaN;
          const gv = inputs.logg ? inputs.logg[i] : NaN;
          const teffLoggPair = Number.isFinite(tv) && Number.isFinite(gv);
          if (bits === 0 && !teffLoggPair) {
            stats.skip('no pair of values the relations can judge');
            continue;
          }
          stats.checked++;

          // Teff and logg: both impossible as written, both ordinary once exchanged.
          if (teffLoggPair && tv < TEFF_MAX_AS_LOGG && gv > LOGG_MIN_AS_TEFF && gv >= TEFF_RANGE[0] && gv <= TEFF_RANGE[1] && tv >= LOGG_RANGE[0] && tv <= LOGG_RANGE[1]) {
            const { lt, g, st, sg } = rr;
            rr.lt = Math.log10(gv);
            rr.g = tv;
            rr.st = 0;
            rr.sg = 0;
            const after = rr.available();
            const z = rr.worstZ(after);
            rr.lt = lt;
            rr.g = g;
            rr.st = st;
            rr.sg = sg;
            if (z <= accept) {
              counts.teffLogg++;
              markUnusable(batch, 'teff', i);
              markUnusable(batch, 'logg', i);
              const relText = after ? `; swapped, ${relationNames(after)} ${after & (after - 1) ? 'fit' : 'fits'} within ${fmt(z, 2)} sigma` : '';
              out.push(
                rowFinding(batch, i, {
                  rule: ID,
                  severity: 'error',
                  columns: [teff!.column, logg!.column],
                  values: { [teff!.column]: round6(teff!.raw[i]), [logg!.column]: round6(logg!.raw[i]) },
                  expected: { value: round6(gv) ?? undefined, unit: 'K' },
                  message: `${teff!.column} = ${fmt(teff!.raw[i])} and ${logg!.column} = ${fmt(logg!.raw[i])} look swapped: no star has Teff = ${fmt(tv)} K or logg = ${fmt(gv)}, but Teff = ${fmt(gv)} K with logg = ${fmt(tv, 3)} is an ordinary star${relText}`,
                  suggestion: { column: teff!.column, value: round6(gv) ?? gv, unit: 'K', text: `swap the two cells: ${teff!.column} = ${fmt(gv)}, ${logg!.column} = ${fmt(tv, 3)}` },
                }),
              );
              continue;
            }
          }
          if (bits === 0) continue;
          const z0 = rr.worstZ(bits);

          // Mass and radius.
          // Only relations that test both cells can tell a swap: gravity, or Stefan-Boltzmann (R) with
          // the mass-luminosity relation (M).
          const bothTested = bits & Relation.Gravity || (bits & Relation.StefanBoltzmann && bits & Relation.MassLuminosity);
          if (z0 > fire && mass && radius && bothTested && Math.abs(rr.lm - rr.lr) >= MIN_SWAP_DEX && !isUnusable(batch, 'mass', i) && !isUnusable(batch, 'radius', i)) {
            const { lm, lr, sm, sr } = rr;
            rr.lm = lr;
            rr.lr = lm;
            rr.sm = sr;
            rr.sr = sm;
            const z = rr.worstZ(bits);
            rr.lm = lm;
            rr.lr = lr;
            rr.sm = sm;
            rr.sr = sr;
            if (z <= accept) {
              counts.massRadius++;
              markUnusable(batch, 'mass', i);
              markUnusable(batch, 'radius', i);
              const m = mass.raw[i];
              const r = radius.raw[i];
              out.push(
                rowFinding(batch, i, {
                  rule: ID,
                  severity: 'error',
                  columns: [mass.column, radius.column],
                  values: { [mass.column]: round6(m), [radius.column]: round6(r), sigmaAsWritten: round6(z0), sigmaSwapped: round6(z) },
                  expected: { value: round6(Math.pow(10, lr)) ?? undefined, unit: 'solMass' },
                  message: `${mass.column} = ${fmt(m)} and ${radius.column} = ${fmt(r)} look swapped: as written the row misses ${relationNames(rr.failing(bits, fire))} by ${fmt(z0, 2)} sigma; with M = ${fmt(Math.pow(10, lr))} M_sun and R = ${fmt(Math.pow(10, lm))} R_sun it fits within ${fmt(z, 2)} sigma`,
                  suggestion: { column: mass.column, value: round6(r) ?? r, unit: mass.unit || 'solMass', text: `swap the two cells: ${mass.column} = ${fmt(r)}, ${radius.column} = ${fmt(m)}` },
                }),
              );
              continue;
            }
          }

          // A value and its own uncertainty.
          for (const s of ERROR_SWAP) {
            if (swapValueError(batch, i, s, bits)) break;
          }
        }

        function swapValueError(b: Batch, i: number, s: (typeof ERROR_SWAP)[number], bits: number): boolean {
          const col = b.quantities[s.q];
          if (!col || col.unit.startsWith('log') || isUnusable(b, s.q, i) || !(RowRelations.involving(s.cell) & bits)) return false;
          const v = col.value[i];
          const lo = col.errLo ? col.errLo[i] : NaN;
          const hi = col.errHi ? col.errHi[i] : NaN;
          const e = Number.isFinite(lo) && Number.isFinite(hi) ? (Math.abs(lo - hi) <= 0.01 * Math.max(lo, hi) ? hi : NaN) : Number.isFinite(hi) ? hi : lo;
          if (!(e > v) || !(v > 0)) return false;
          // Both readings are judged with the error the swapped row would carry (v, on a value e).
          const sd = v / (e * Math.LN10);
          const keepErr = errOf(s.cell);
          setErr(s.cell, sd);
          if (!rr.pins(s.cell, bits, accept)) {
            setErr(s.cell, keepErr);
            return false;
          }
          const zAsWritten = rr.worstZ(bits);
          const failing = rr.failing(bits, fire);
          const z = rr.worstZWith(s.cell, Math.log10(e), bits);
          setErr(s.cell, keepErr);
          if (!(zAsWritten > fire) || !(z <= accept)) return false;
          counts.valueError++;
          markUnusable(b, s.q, i);
          const errCol = col.errColumns[0] ?? `${col.column} error`;
          const scale = col.raw[i] / v;
          out.push(
            rowFinding(b, i, {
              rule: ID,
              severity: 'error',
              columns: [col.column, ...col.errColumns],
              values: { [col.column]: round6(col.raw[i]), [errCol]: round6(e * scale), sigmaAsWritten: round6(zAsWritten), sigmaSwapped: round6(z) },
              expected: { value: round6(e) ?? undefined, unit: QUANTITY_INFO[s.q].unit },
              message: `${col.column} = ${fmt(col.raw[i])} and its error ${fmt(e * scale)} look swapped: as written the row misses ${relationNames(failing)} by ${fmt(zAsWritten, 2)} sigma; with ${fmt(e)} ${s.unit} it fits within ${fmt(z, 2)} sigma`,
              suggestion: { column: col.column, value: round6(e * scale) ?? e * scale, unit: col.unit, text: `swap value and error: ${col.column} = ${fmt(e * scale)}, error ${fmt(col.raw[i])}` },
            }),
          );
          return true;
        }

        function errOf(cell: Cell): number {
          return cell === Cell.Mass ? rr.sm : cell === Cell.Radius ? rr.sr : cell === Cell.Luminosity ? rr.sl : rr.st;
        }

        function setErr(cell: Cell, sd: number): void {
          if (cell === Cell.Mass) rr.sm = sd;
          else if (cell === Cell.Radius) rr.sr = sd;
          else if (cell === Cell.Luminosity) rr.sl = sd;
          else rr.st = sd;
        }
      },
      summary() {
        return { rowsMassRadius: counts.massRadius, rowsTeffLogg: counts.teffLogg, rowsValueError: counts.valueError };
      },
      // Only counts cross batches; every finding is made in `check`.
      save() {
        return { ...counts };
      },
      absorb(state) {
        const s = state as typeof counts;
        counts.massRadius += s.massRadius;
        counts.teffLogg += s.teffLogg;
        counts.valueError += s.valueError;
      },
    };
  },
};
