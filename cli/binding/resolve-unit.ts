/**
 * Which unit a bound value column is read in. Trust runs from --unit, through the file's metadata
 * and a unit written in the header, to what the quantity is by definition; only then are the
 * sample values asked (infer-unit.ts), and the notes say so.
 */
import type { NumericQuantity } from '../../rules/engine/quantities.js';
import type { BindContext, Candidate, Resolved } from './bind-context.js';
import { optionUnit, unitOrigin } from './bind-options.js';
import { quantityUnit } from './convert.js';
import { defaultUnit, finiteValues, inferLogNamed, inferUnit, type Inferred } from './infer-unit.js';
import { DIMENSION_UNIT, QUANTITY_DIMENSION, isNoUnit } from './units.js';

export function resolveUnit(ctx: BindContext, c: Candidate, q: NumericQuantity): Resolved {
  // What the name says about unit and log only counts when the name meant this quantity.
  const g = c.guess.role === 'value' && c.guess.quantity === q ? c.guess : null;
  const nameSaysLog = g?.log === true;

  const optUnit = optionUnit(ctx.options, c.column);
  if (optUnit !== null) return declared(ctx, c, q, optUnit, 'option', false);

  const metaUnit = ctx.meta[c.index].unit;
  if (!isNoUnit(metaUnit)) return declared(ctx, c, q, (metaUnit as string).trim(), 'metadata', nameSaysLog);

  if (g && g.unit !== null) {
    const qu = quantityUnit(q, g.unit, c.column, 'written in the header');
    const log = qu.log || g.log;
    const unit = log && !qu.log ? `log(${qu.unit})` : qu.unit;
    const hint = g.unitHint ?? g.unit;
    const dot = /\b([LMR])\.(?=\)|$)/.exec(hint);
    const where =
      g.unitPlace === 'suffix'
        ? `from the name suffix \`${hint}\``
        : g.unitPlace === 'whole'
          ? 'because the name is the unit'
          : `from \`${hint}\` in the name${dot ? ` (\`${dot[1]}.\` read as ${dot[1]}_sun)` : ''}`;
    return { unit, source: 'header', phrase: `unit ${unit} ${where}`, qu: { ...qu, log, unit } };
  }

  if (q === 'feh') return byName(q, 'dex', 'unit dex, as [Fe/H] is by definition');
  if (q === 'mbol') return byName(q, 'mag', 'unit mag, as a bolometric magnitude is by definition');

  const raw = ctx.sampleRaw(c.index);
  const vals = raw ? finiteValues(raw) : new Float64Array(0);

  if (nameSaysLog) {
    const inf = inferLogNamed(q, vals);
    if (inf) return inferredUnit(ctx, c, q, inf);
    const unit = `log(${DIMENSION_UNIT[QUANTITY_DIMENSION[q]]})`;
    return byName(q, unit, `unit ${unit}, as the name marks a log value`);
  }
  if (vals.length === 0) {
    return inferredUnit(ctx, c, q, { unit: defaultUnit(q), source: 'none', why: raw ? 'the sample has no values in this column' : 'there is no sample to check' });
  }
  return inferredUnit(ctx, c, q, inferUnit(ctx, c, q, vals, raw as Float64Array));
}

function byName(q: NumericQuantity, unit: string, phrase: string): Resolved {
  return { unit, source: 'name', phrase, qu: quantityUnit(q, unit, '', 'by name') };
}

/** A unit the user or the file declared. */
function declared(ctx: BindContext, c: Candidate, q: NumericQuantity, text: string, source: 'option' | 'metadata', nameSaysLog: boolean): Resolved {
  const from = source === 'option' ? `from ${unitOrigin(ctx.options, c.column)}` : "from the file's metadata";
  const qu = quantityUnit(q, text, c.column, from);
  let unit = qu.unit;
  let log = qu.log;
  if (source === 'metadata' && nameSaysLog && !qu.log && QUANTITY_DIMENSION[q] !== 'dex') {
    // Tables label a log L column `Lsun` (and log g `cm/s2`) more often than they write the log; the name breaks the tie.
    log = true;
    unit = `log(${qu.unit})`;
    ctx.notes.push(`\`${c.column}\`: the metadata says \`${text}\` but the name marks a log value; read as ${unit}.`);
  }
  const orig = text !== unit ? ` (\`${text}\`)` : '';
  const phrase = source === 'option' ? `unit ${unit} ${from}` : `unit ${unit} from the file's metadata${orig}`;
  return { unit, source, phrase, qu: { ...qu, log, unit } };
}

function inferredUnit(ctx: BindContext, c: Candidate, q: NumericQuantity, inf: Inferred): Resolved {
  const qu = quantityUnit(q, inf.unit, c.column, 'inferred');
  if (inf.source === 'none') {
    ctx.notes.push(`\`${c.column}\`: no unit declared and ${inf.why}; assumed ${inf.unit}.`);
    return { unit: qu.unit, source: 'none', phrase: `unit ${qu.unit} assumed (${inf.why})`, qu };
  }
  ctx.notes.push(`\`${c.column}\`: no unit declared; ${qu.unit} inferred from the values: ${inf.why}.`);
  return { unit: qu.unit, source: 'inferred', phrase: `unit ${qu.unit} inferred from the values`, qu };
}
