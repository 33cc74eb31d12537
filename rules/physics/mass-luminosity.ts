import { TOUT_MAX_MASS, TOUT_MIN_MASS, toutZamsLuminosity } from './zams.js';

/**
 * A mass-luminosity relation log10(L/L_sun) = f(M). Outside its validity range it returns NaN:
 * no verdict, never an extrapolation.
 */
export interface MassLuminosityRelation {
  id: string;
  name: string;
  reference: string;
  minMass: number;
  maxMass: number;
  /** log10 L in L_sun; NaN outside [minMass, maxMass]. */
  logL(massSun: number): number;
  /** d log L / d log M at M, used to propagate the mass error; NaN outside the range. */
  slope(massSun: number): number;
}

export interface Segment {
  upper: number;
  a: number;
  b: number;
}

function piecewisePowerLaw(
  spec: Omit<MassLuminosityRelation, 'logL' | 'slope'>,
  segments: readonly Segment[],
  lowerInclusive: boolean,
): MassLuminosityRelation {
  const find = (m: number): Segment | undefined => {
    if (!(m <= spec.maxMass) || (lowerInclusive ? m < spec.minMass : m <= spec.minMass)) return undefined;
    return segments.find((s) => m <= s.upper);
  };
  return {
    ...spec,
    logL(m) {
      const s = find(m);
      return s ? s.a * Math.log10(m) + s.b : NaN;
    },
    slope(m) {
      const s = find(m);
      return s ? s.a : NaN;
    },
  };
}

/**
 * Eker et al. 2018, MNRAS 479, 5491, Table 4: six-piece empirical relation from 509 main-sequence
 * components of detached eclipsing binaries, 0.179 <= M <= 31 M_sun. Segments do not join exactly
 * (steps up to 0.08 dex at the breaks); we use them as published. The lower bound is inclusive
 * because the paper's abstract gives the calibrated range as 0.179 <= M <= 31: its lightest
 * calibrating star must still get a verdict.
 */
/** Eker et al. 2018 Table 4 segments: log L = a log M + b for M up to `upper` (M_sun). */
export const EKER_2018_SEGMENTS: readonly Segment[] = [
  { upper: 0.45, a: 2.028, b: -0.976 },
  { upper: 0.72, a: 4.572, b: -0.102 },
  { upper: 1.05, a: 5.743, b: -0.007 },
  { upper: 2.4, a: 4.329, b: 0.01 },
  { upper: 7.0, a: 3.967, b: 0.093 },
  { upper: 31, a: 2.865, b: 1.105 },
];

export const EKER_2018: MassLuminosityRelation = piecewisePowerLaw(
  {
    id: 'eker2018',
    name: 'Eker et al. 2018 six-piece empirical relation',
    reference: 'Eker et al. 2018, MNRAS 479, 5491 (arXiv:1807.02568), Table 4',
    minMass: 0.179,
    maxMass: 31,
  },
  EKER_2018_SEGMENTS,
  true,
);

const LOG_023 = Math.log10(0.23);
const LOG_14 = Math.log10(1.4);
const LOG_32000 = Math.log10(32000);

/**
 * The classic piecewise textbook relation: 0.23 M^2.3 (M < 0.43), M^4 (0.43-2), 1.4 M^3.5 (2-55),
 * 32000 M (>= 55). The top segment is in effect an Eddington law (98 % of the X = 1 limit), not a
 * main-sequence fit, and over-predicts real massive stars by a factor of 2-4. We bound it to
 * 0.1-100 M_sun.
 */
export const CLASSIC: MassLuminosityRelation = {
  id: 'classic',
  name: 'classic piecewise power law',
  reference: 'attributed (from memory) to Salaris & Cassisi 2005, Evolution of Stars and Stellar Populations, pp. 138-140, and Duric 2004, Advanced Astrophysics, p. 19',
  minMass: 0.1,
  maxMass: 100,
  logL(m) {
    if (!(m >= 0.1 && m <= 100)) return NaN;
    const lm = Math.log10(m);
    if (m < 0.43) return LOG_023 + 2.3 * lm;
    if (m < 2) return 4 * lm;
    if (m < 55) return LOG_14 + 3.5 * lm;
    return LOG_32000 + lm;
  },
  slope(m) {
    if (!(m >= 0.1 && m <= 100)) return NaN;
    return m < 0.43 ? 2.3 : m < 2 ? 4 : m < 55 ? 3.5 : 1;
  },
};

/**
 * Tout et al. 1996 ZAMS luminosity at a fixed metallicity, as a relation. The rational function
 * and its numerical slope cost a dozen powers per call and catalog loops call them per row, so
 * both are tabulated once on a fine grid in log M (step 0.0001 dex) and interpolated linearly;
 * the interpolation error is below 1e-6 dex, far inside the fit's own ~5 % accuracy.
 */
export function toutZamsRelation(metallicity = 0.02): MassLuminosityRelation {
  const h = 0.001;
  const exact = (m: number) => Math.log10(toutZamsLuminosity(m, metallicity));
  const exactSlope = (m: number) => {
    // Numerical derivative in log M, one-sided at the range edges.
    const lo = Math.max(TOUT_MIN_MASS, m * 10 ** -h);
    const hi = Math.min(TOUT_MAX_MASS, m * 10 ** h);
    return (exact(hi) - exact(lo)) / (Math.log10(hi) - Math.log10(lo));
  };
  const x0 = Math.log10(TOUT_MIN_MASS);
  const x1 = Math.log10(TOUT_MAX_MASS);
  const step = 0.0001;
  const n = Math.round((x1 - x0) / step) + 1;
  const logLTable = new Float64Array(n);
  const slopeTable = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const m = 10 ** Math.min(x1, x0 + k * step);
    logLTable[k] = exact(m);
    slopeTable[k] = exactSlope(m);
  }
  const interp = (table: Float64Array, m: number): number => {
    if (!(m >= TOUT_MIN_MASS && m <= TOUT_MAX_MASS)) return NaN;
    const u = (Math.log10(m) - x0) / step;
    const k = Math.min(n - 2, Math.floor(u));
    const f = u - k;
    return table[k] + f * (table[k + 1] - table[k]);
  };
  return {
    id: metallicity === 0.02 ? 'tout1996' : `tout1996-z${metallicity}`,
    name: `Tout et al. 1996 ZAMS (Z = ${metallicity})`,
    reference: 'Tout, Pols, Eggleton & Han 1996, MNRAS 281, 257',
    minMass: TOUT_MIN_MASS,
    maxMass: TOUT_MAX_MASS,
    logL: (m) => interp(logLTable, m),
    slope: (m) => interp(slopeTable, m),
  };
}

export const TOUT_1996 = toutZamsRelation(0.02);
