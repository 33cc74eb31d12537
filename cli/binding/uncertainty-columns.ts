/**
 * Uncertainty columns: which of the candidates pointing at a bound value are its errors, lower and
 * upper or symmetric, in which unit, and whether the lower side is stored negative.
 */
import type { NumericQuantity } from '../../rules/engine/quantities.js';
import type { BindContext, Candidate, Chosen } from './bind-context.js';
import { optionUnit } from './bind-options.js';
import { errorSpec } from './convert.js';
import type { NameRole } from './names.js';
import type { ErrorBinding } from './types.js';
import { isNoUnit } from './units.js';

/** Bind the uncertainty columns of quantity q's value column, if q is bound with a unit. */
export function attachErrors(ctx: BindContext, q: NumericQuantity): void {
  const chosen = ctx.chosen.get(q);
  if (!chosen || !chosen.resolved) return;
  const vi = chosen.cand.index;
  // Uncertainties given with --bind replace whatever the names suggest for this quantity.
  const fromOptions = ctx.candidates.filter((c) => c.quantity === q && c.role !== 'value' && c.source === 'option');
  let errs: Candidate[];
  if (fromOptions.length > 0) {
    errs = fromOptions;
  } else {
    errs = ctx.candidates.filter((c) => c.role !== 'value' && c.base === vi);
    if (errs.length === 0) return;
    errs = pickErrorSet(ctx, chosen, errs);
  }
  chosen.errors = errs.map((e) => errorBinding(ctx, q, chosen, e));
}

function pickErrorSet(ctx: BindContext, chosen: Chosen, errs: Candidate[]): Candidate[] {
  const col = chosen.cand.column;
  const best = (role: NameRole): Candidate | undefined => {
    const of = errs.filter((e) => e.role === role).sort((a, b) => b.score - a.score || a.index - b.index);
    if (of.length > 1) ctx.notes.push(`\`${col}\` has more than one ${role === 'sym' ? '' : role === 'lo' ? 'lower ' : 'upper '}uncertainty column (${of.map((e) => `\`${e.column}\``).join(', ')}); using \`${of[0].column}\`.`);
    return of[0];
  };
  const lo = best('lo');
  const hi = best('hi');
  const sym = best('sym');
  if ((lo || hi) && sym) {
    ctx.notes.push(`\`${col}\` has both a symmetric uncertainty \`${sym.column}\` and ${lo && hi ? 'lower and upper' : lo ? 'a lower' : 'an upper'} one; the asymmetric one is used.`);
  }
  if (lo && hi && looksLikeBounds(ctx, chosen, lo, hi)) {
    ctx.notes.push(
      `\`${lo.column}\` and \`${hi.column}\` look like bounds around \`${col}\` (value between them in the sample), not uncertainties; ` +
        `they are not used (bind them with --bind ${lo.column}=${chosen.cand.quantity}.errLo if they are).`,
    );
    return sym ? [sym] : [];
  }
  return lo || hi ? [lo, hi].filter((e): e is Candidate => e !== undefined) : sym ? [sym] : [];
}

/**
 * An uncertainty magnitude rarely exceeds its value; a bound above the value always does. When
 * the value sits between `lo` and `hi` in nine rows of ten, they are an interval, not errors.
 */
function looksLikeBounds(ctx: BindContext, chosen: Chosen, lo: Candidate, hi: Candidate): boolean {
  const v = ctx.sampleRaw(chosen.cand.index);
  const a = ctx.sampleRaw(lo.index);
  const b = ctx.sampleRaw(hi.index);
  if (!v || !a || !b) return false;
  let n = 0;
  let inside = 0;
  for (let i = 0; i < v.length; i++) {
    if (!Number.isFinite(v[i]) || !Number.isFinite(a[i]) || !Number.isFinite(b[i])) continue;
    n++;
    if (a[i] < v[i] && v[i] < b[i]) inside++;
  }
  return n >= 5 && inside >= 0.9 * n;
}

function errorBinding(ctx: BindContext, q: NumericQuantity, chosen: Chosen, e: Candidate): ErrorBinding {
  const value = chosen.resolved!;
  const raw = ctx.sampleRaw(e.index);
  let negatives = 0;
  let positives = 0;
  if (raw) {
    for (let i = 0; i < raw.length; i++) {
      if (raw[i] < 0) negatives++;
      else if (raw[i] > 0) positives++;
    }
  }
  const negativeStored = e.role === 'lo' && ((e.source !== 'option' && e.guess.negativeStored) || (negatives > 0 && positives === 0));
  if (negatives > 0 && !negativeStored) {
    ctx.notes.push(`\`${e.column}\`: ${negatives} negative uncertainties in the sample; read as magnitudes.`);
  }
  const declared = optionUnit(ctx.options, e.column) ?? (isNoUnit(ctx.meta[e.index].unit) ? null : (ctx.meta[e.index].unit as string).trim());
  let unit: string;
  if (declared !== null) {
    unit = declared;
  } else if (value.qu.log || q === 'feh') {
    unit = 'dex';
  } else if (q === 'mbol') {
    unit = 'mag';
  } else {
    unit = value.unit;
  }
  // Validate now: a unit that cannot hold this uncertainty is a configuration error.
  const es = errorSpec(q, unit, e.column);
  if (es.dex) unit = 'dex';
  return { role: e.role === 'value' ? 'sym' : e.role, column: e.column, columnIndex: e.index, unit, negativeStored };
}
