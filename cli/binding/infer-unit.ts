/**
 * A column's unit from its sample values, for when nobody declared one: the median against the
 * plausible ranges of each unit, negative values against a linear reading, and luminosity, radius
 * and distance against what the quantities bound before them predict.
 */
import { LOGG_SUN, TEFF_SUN_K } from '../../rules/physics/constants.js';
import { EKER_2018 } from '../../rules/physics/mass-luminosity.js';
import { QUANTITY_INFO, type NumericQuantity } from '../../rules/engine/quantities.js';
import type { BindContext, Candidate } from './bind-context.js';
import { BindingError } from './types.js';

/** Rows of evidence below which a vote between readings says nothing. */
const MIN_VOTES = 3;

/** Inference outcome before it becomes a Resolved. */
export interface Inferred {
  unit: string;
  source: 'inferred' | 'none';
  why: string;
}

function inferred(unit: string, why: string): Inferred {
  return { unit, source: 'inferred', why };
}

/** The values did not decide it: a convention or the canonical unit stands in. */
function assumed(unit: string, why: string): Inferred {
  return { unit, source: 'none', why };
}

export function finiteValues(a: Float64Array): Float64Array {
  let n = 0;
  for (let i = 0; i < a.length; i++) if (Number.isFinite(a[i])) n++;
  const out = new Float64Array(n);
  let k = 0;
  for (let i = 0; i < a.length; i++) if (Number.isFinite(a[i])) out[k++] = a[i];
  return out;
}

function median(a: Float64Array): number {
  if (a.length === 0) return NaN;
  const s = Float64Array.from(a).sort();
  const h = s.length >> 1;
  return s.length % 2 ? s[h] : (s[h - 1] + s[h]) / 2;
}

/**
 * Not rules/engine/findings.ts `fmt`: binding notes switch to exponent form from 1e5 and keep
 * three significant digits there, and their wording is part of what `starsieve columns` prints.
 */
function fmt(x: number): string {
  if (!Number.isFinite(x)) return String(x);
  const a = Math.abs(x);
  return a !== 0 && (a >= 1e5 || a < 1e-3) ? x.toExponential(2) : String(Number(x.toPrecision(4)));
}

/** Catalog fill values; a negative among these says nothing about log vs linear. */
const SENTINELS = new Set([-1, -9, -99, -999, -9999, -99999, -9.99, -99.9, -99.99]);

/**
 * Negative values mean log (linear L, M, R are positive), but only when there are enough of them
 * that are not fill values: one `-99` in a linear column is a sentinel, not a convention.
 */
function negativeEvidence(vals: Float64Array): { says: boolean; count: number } {
  let count = 0;
  for (let i = 0; i < vals.length; i++) if (vals[i] < 0 && !SENTINELS.has(vals[i])) count++;
  return { says: count >= Math.max(2, 0.01 * vals.length), count };
}

export function defaultUnit(q: NumericQuantity): string {
  return q === 'logg' ? 'log(cm.s-2)' : QUANTITY_INFO[q].unit;
}

/**
 * A name that marks a log value is believed unless the median is no log of the solar unit: a
 * linear g in cgs, or log10 of erg/s or of watts. Null when the name's log reading stands.
 */
export function inferLogNamed(q: NumericQuantity, vals: Float64Array): Inferred | null {
  const med = median(vals);
  if (q === 'logg' && med > 100) return inferred('cm.s-2', `median ${fmt(med)}, impossible for log g, so linear g in cgs`);
  if (q === 'luminosity' && med > 31 && med < 40) return inferred('log(erg/s)', `the name says log and the median ${fmt(med)} is log10 of erg/s`);
  if (q === 'luminosity' && med > 24 && med < 30) return inferred('log(W)', `the name says log and the median ${fmt(med)} is log10 of watts`);
  return null;
}

/** The unit a column's values imply, for a column whose unit nobody declared. */
export function inferUnit(ctx: BindContext, c: Candidate, q: NumericQuantity, vals: Float64Array, raw: Float64Array): Inferred {
  const med = median(vals);
  switch (q) {
    case 'teff':
      if (med >= 2.3 && med <= 4.8) return inferred('log(K)', `median ${fmt(med)} lies in 2.3-4.8, where only log Teff falls`);
      if (med > 4.8 && med <= 200) return inferred('kK', `median ${fmt(med)} is too low for kelvin and fits kK`);
      return inferred('K', `median ${fmt(med)} fits kelvin`);
    case 'logg':
      if (med > 100) return inferred('cm.s-2', `median ${fmt(med)}, impossible for log g, so linear g in cgs`);
      return inferred('log(cm.s-2)', `median ${fmt(med)} fits log g in cgs`);
    case 'mass': {
      const neg = negativeEvidence(vals);
      if (neg.says) return inferred('log(solMass)', `${neg.count} negative values, impossible for a linear mass`);
      if (med > 1e31) return inferred('g', `median ${fmt(med)} matches grams (M_sun = 1.989e33 g)`);
      if (med > 1e26) return inferred('kg', `median ${fmt(med)} matches kilograms (M_sun = 1.989e30 kg)`);
      if (med > 500) {
        throw new BindingError(
          `column \`${c.column}\`: mass values (median ${fmt(med)}) are too large for solar masses and too small for kg; ` +
            `declare the unit, e.g. --unit ${c.column}=jupiterMass`,
          c.column,
        );
      }
      return inferred('solMass', `median ${fmt(med)} fits solar masses`);
    }
    case 'radius':
      return inferRadius(ctx, vals, raw, med);
    case 'luminosity':
      return inferLuminosity(ctx, c, vals, raw, med);
    case 'distance':
      return inferDistance(ctx, raw) ?? assumed('pc', 'distances are in pc by convention and nothing here says otherwise');
    case 'parallax':
      return assumed('mas', 'parallaxes are in mas by convention and nothing here says otherwise');
    case 'hydrogenFraction':
      return med > 1 ? inferred('%', `median ${fmt(med)} is above 1, so per cent`) : inferred('', `median ${fmt(med)} fits a mass fraction`);
    default:
      return assumed(defaultUnit(q), 'nothing to infer it from');
  }
}

function inferRadius(ctx: BindContext, vals: Float64Array, raw: Float64Array, med: number): Inferred {
  const neg = negativeEvidence(vals);
  if (neg.says) return inferred('log(solRad)', `${neg.count} negative values, impossible for a linear radius`);
  // The largest known stars are about 2000 R_sun; beyond that the numbers are in a length unit.
  if (med <= 3000) return inferred('solRad', `median ${fmt(med)} fits solar radii`);
  const lengths: [string, number][] = [
    ['km', 1e3 / 6.957e8],
    ['m', 1 / 6.957e8],
    ['cm', 1e-2 / 6.957e8],
  ];
  const mass = ctx.sampleCanonical('mass');
  const logg = ctx.sampleCanonical('logg');
  if (mass && logg) {
    const off = (f: number) => {
      const d: number[] = [];
      for (let i = 0; i < raw.length; i++) {
        const ref = 0.5 * (Math.log10(mass[i]) + LOGG_SUN - logg[i]);
        const v = Math.log10(raw[i] * f);
        if (Number.isFinite(ref) && Number.isFinite(v)) d.push(v - ref);
      }
      return d.length >= MIN_VOTES ? Math.abs(median(Float64Array.from(d))) : Infinity;
    };
    const best = lengths.map(([u, f]) => ({ u, d: off(f) })).sort((a, b) => a.d - b.d)[0];
    if (best.d < 0.5) {
      return inferred(best.u, `median ${fmt(med)} is too large for solar radii; in ${best.u} it agrees with the radius from mass and log g`);
    }
  }
  const closest = lengths.map(([u, f]) => ({ u, d: Math.abs(Math.log10(med * f)) })).sort((a, b) => a.d - b.d)[0];
  return inferred(closest.u, `median ${fmt(med)} is too large for solar radii and gives stellar sizes in ${closest.u}`);
}

/**
 * Expected log L per sample row: Stefan-Boltzmann from R and Teff where both are bound and
 * present, else Eker et al. 2018 from the mass (inside its 0.179-31 M_sun range, NaN outside).
 */
function referenceLogL(ctx: BindContext): { logL: Float64Array; tol: Float64Array; what: string } | null {
  const r = ctx.sampleCanonical('radius');
  const t = ctx.sampleCanonical('teff');
  const m = ctx.sampleCanonical('mass');
  if (!(r && t) && !m) return null;
  const n = (r ?? t ?? m)!.length;
  const logL = new Float64Array(n).fill(NaN);
  const tol = new Float64Array(n);
  let sb = 0;
  let ml = 0;
  for (let i = 0; i < n; i++) {
    if (r && t && r[i] > 0 && t[i] > 0) {
      logL[i] = 2 * Math.log10(r[i]) + 4 * Math.log10(t[i] / TEFF_SUN_K);
      tol[i] = 0.5;
      sb++;
    } else if (m && m[i] > 0) {
      const e = EKER_2018.logL(m[i]);
      if (Number.isFinite(e)) {
        logL[i] = e;
        // Main-sequence relation: giants stray far, so a wider window.
        tol[i] = 0.7;
        ml++;
      }
    }
  }
  const parts: string[] = [];
  if (sb > 0) parts.push(`Stefan-Boltzmann from \`${ctx.chosen.get('radius')!.cand.column}\` and \`${ctx.chosen.get('teff')!.cand.column}\``);
  if (ml > 0) parts.push(`Eker et al. 2018 from \`${ctx.chosen.get('mass')!.cand.column}\``);
  return parts.length > 0 ? { logL, tol, what: parts.join(' and ') } : null;
}

function inferLuminosity(ctx: BindContext, c: Candidate, vals: Float64Array, raw: Float64Array, med: number): Inferred {
  // Between W and erg/s lies a factor 1e7; no star is below 1e-4 L_sun, so the bands do not touch.
  if (med > 1e30) return inferred('erg/s', `median ${fmt(med)} matches erg/s (L_sun = 3.828e33 erg/s)`);
  if (med > 1e20) return inferred('W', `median ${fmt(med)} matches watts (L_sun = 3.828e26 W)`);

  const ref = referenceLogL(ctx);
  let asLog = 0;
  let asLin = 0;
  let comparable = 0;
  if (ref) {
    for (let i = 0; i < raw.length; i++) {
      const v = raw[i];
      const e = ref.logL[i];
      if (!Number.isFinite(v) || !Number.isFinite(e)) continue;
      comparable++;
      const rl = Math.abs(v - e);
      const rn = v > 0 ? Math.abs(Math.log10(v) - e) : Infinity;
      if (Math.min(rl, rn) < ref.tol[i] && Math.abs(rl - rn) > 0.3) {
        if (rl < rn) asLog++;
        else asLin++;
      }
    }
  }
  const total = asLog + asLin;
  const neg = negativeEvidence(vals);
  let log: boolean;
  let why: string;
  if (neg.says) {
    log = true;
    why = `${neg.count} negative values, impossible for a linear luminosity`;
  } else if (asLog !== asLin && (total >= MIN_VOTES || total >= 0.5 * comparable)) {
    // A short table can still settle it when most of its comparable rows vote one way.
    log = asLog > asLin;
    why = `${Math.max(asLog, asLin)} of ${total} rows that could be told apart agree with ${ref!.what} read as ${log ? 'log(solLum)' : 'solLum'}`;
  } else if (vals.reduce((a, b) => Math.max(a, b), -Infinity) > 7.5) {
    log = false;
    why = 'values above 7.5 cannot be log L in solar units';
  } else {
    throw new BindingError(
      `column \`${c.column}\`: cannot tell from the values whether luminosity is linear or log (median ${fmt(med)}, no negative values` +
        `${ref ? `, ${ref.what} did not settle it` : ', and no radius with Teff, or mass, to compare with'}); ` +
        `declare it with --unit ${c.column}=solLum or --unit ${c.column}=log(solLum)`,
      c.column,
    );
  }
  const minority = log ? asLin : asLog;
  if (ref && minority >= Math.max(MIN_VOTES, 0.05 * total)) {
    const unit = log ? 'log(solLum)' : 'solLum';
    const otherUnit = log ? 'solLum' : 'log(solLum)';
    ctx.notes.push(
      `\`${c.column}\` looks mixed: ${asLog} sample rows agree with ${ref.what} as log(solLum) and ${asLin} as solLum; ` +
        `read as ${unit}, so rows written as ${otherUnit} will be flagged (use --unit ${c.column}=${otherUnit} if that is the convention).`,
    );
  }
  return inferred(log ? 'log(solLum)' : 'solLum', why);
}

/** Distance against a parallax whose unit was declared: 1000/plx[mas] should be the distance in pc. */
function inferDistance(ctx: BindContext, raw: Float64Array): Inferred | null {
  const p = ctx.chosen.get('parallax');
  if (!p || !p.resolved || !['option', 'metadata', 'header'].includes(p.resolved.source)) return null;
  const plx = ctx.sampleCanonical('parallax');
  if (!plx) return null;
  const d: number[] = [];
  for (let i = 0; i < raw.length; i++) {
    const x = Math.log10(raw[i]) - Math.log10(1000 / plx[i]);
    if (plx[i] > 0 && Number.isFinite(x)) d.push(x);
  }
  if (d.length < MIN_VOTES) return null;
  const m = median(Float64Array.from(d));
  const units: [string, number][] = [
    ['pc', 0],
    ['kpc', -3],
    ['lyr', Math.log10(3.261563777)],
  ];
  for (const [u, off] of units) {
    if (Math.abs(m - off) < 0.15) return inferred(u, `it agrees with 1/parallax from \`${p.cand.column}\` in ${u}`);
  }
  return null;
}
