import { CLASSIC, EKER_2018, TOUT_1996, type MassLuminosityRelation } from './mass-luminosity.js';
import { calibrationSegment, type CatalogFit } from './calibration.js';
import { TOUT_MAX_Z, TOUT_MIN_Z, metallicityFromFeH, toutZamsLuminosity } from './zams.js';

/**
 * How a star's luminosity is judged against a mass-luminosity relation at its mass: either
 * against a mean relation with a symmetric intrinsic scatter, or against the ZAMS as a faint bound
 * with an allowance for main-sequence brightening on the bright side.
 */
export interface RelationVerdictInput {
  /** Relation id that judges this mass; '' when no relation covers it. */
  relation: string;
  /** log10 L of the relation at M. */
  logL: number;
  /** d log L / d log M. */
  slope: number;
  /** Intrinsic scatter in dex around the relation (for ZAMS: below it). */
  scatter: number;
  /** Dex above logL that a normal main-sequence star may reach (0 for a mean relation). */
  brightAllowance: number;
  /**
   * Scatter for a star that states no measurement error (dex): a catalog's own fit knows its
   * whole spread, errors included, and uses it there; NaN (or absent) means use `scatter`.
   */
  scatterIfNoErrors?: number;
}

/**
 * `catalog` is the catalog's own robust fit (see calibration.ts); it needs a first pass, and where
 * none ran (or a segment has too few stars) it judges as `default` does.
 */
export const RELATION_CHOICES = ['default', 'eker2018', 'classic', 'tout1996', 'catalog'] as const;
export type RelationChoice = (typeof RELATION_CHOICES)[number];

/**
 * Intrinsic scatter of log L around Eker et al. 2018 per mass segment, in dex. Eker 2018 give
 * none we could confirm, so these are our own: the robust (1.4826 x MAD) scatter of the
 * main-sequence rows of two real catalogs about the relation, measurement errors removed in
 * quadrature, rounded up. Measured (test/e2e/scatter-calibration.test.ts re-measures them):
 * CARMENES (Cifuentes et al. 2025) 0.077 dex below 0.45 M_sun (856 stars), 0.103 for 0.45-0.72
 * (654); PHL exoplanet hosts 0.152 for 0.45-0.72 (391), 0.140 for 0.72-1.05 (1878), 0.162 for
 * 1.05-2.4 (1047). Above 2.4 M_sun neither catalog has enough main-sequence stars; 0.20 dex is
 * a cautious assumption there (the main sequence widens in log L with mass; not measured).
 */
export const EKER_SCATTER: readonly { upper: number; scatter: number; measuredOn: string }[] = [
  { upper: 0.45, scatter: 0.1, measuredOn: 'CARMENES 0.077 (n = 856), PHL 0.076 before error removal (n = 123)' },
  { upper: 0.72, scatter: 0.15, measuredOn: 'CARMENES 0.103 (n = 654), PHL 0.152 (n = 391)' },
  { upper: 1.05, scatter: 0.15, measuredOn: 'PHL 0.140 (n = 1878), CARMENES 0.114 (n = 35)' },
  { upper: 2.4, scatter: 0.17, measuredOn: 'PHL 0.162 (n = 1047)' },
  { upper: 7.0, scatter: 0.2, measuredOn: 'assumed; too few main-sequence stars in the reference catalogs' },
  { upper: 31, scatter: 0.2, measuredOn: 'assumed; no main-sequence stars in the reference catalogs' },
];

/** Scatter of real ZAMS-near stars below the Tout ZAMS (about 5 % accuracy of the fit plus metallicity). */
export const ZAMS_FAINT_SCATTER = 0.1;
/**
 * Brightening over the main-sequence lifetime: roughly 0.3-0.5 dex by the terminal-age main
 * sequence (from memory, physics-reference.md §5); we allow the upper end.
 */
export const MS_BRIGHTENING_DEX = 0.5;
/** The classic relation is crude (0.2-0.6 dex off real stars in places, §4f), hence a wide scatter. */
export const CLASSIC_SCATTER = 0.3;

function ekerScatter(m: number): number {
  for (const s of EKER_SCATTER) if (m <= s.upper) return s.scatter;
  return NaN;
}

function fill(out: RelationVerdictInput, rel: MassLuminosityRelation | null, m: number, scatter: number, allowance: number): boolean {
  if (!rel) {
    out.relation = '';
    return false;
  }
  const logL = rel.logL(m);
  if (!Number.isFinite(logL)) {
    out.relation = '';
    return false;
  }
  out.relation = rel.id;
  out.logL = logL;
  out.slope = rel.slope(m);
  out.scatter = scatter;
  out.brightAllowance = allowance;
  out.scatterIfNoErrors = NaN;
  return true;
}

/**
 * Fills `out` with the relation that judges mass `m` under `choice`; false when none covers it.
 * `default` uses Eker 2018 inside its range (0.179 < M <= 31) and the Tout 1996 ZAMS as a faint
 * bound outside it (0.1-0.179 and 31-100 M_sun), so 0.1-100 M_sun is covered without extrapolating
 * any relation. `out` is reused by the caller so the hot loop makes no object per row.
 */
export function relationAt(choice: RelationChoice, m: number, out: RelationVerdictInput): boolean {
  switch (choice) {
    case 'eker2018':
      return fill(out, EKER_2018, m, ekerScatter(m), 0);
    case 'classic':
      return fill(out, CLASSIC, m, CLASSIC_SCATTER, 0);
    case 'tout1996':
      return fill(out, TOUT_1996, m, ZAMS_FAINT_SCATTER, MS_BRIGHTENING_DEX);
    case 'default':
    case 'catalog':
      if (m > EKER_2018.minMass && m <= EKER_2018.maxMass) return fill(out, EKER_2018, m, ekerScatter(m), 0);
      return fill(out, TOUT_1996, m, ZAMS_FAINT_SCATTER, MS_BRIGHTENING_DEX);
  }
}

/**
 * The catalog's own fit at mass `m`: inside 0.179-31 M_sun the fitted segment with its intrinsic
 * scatter (and its whole robust scatter for stars that state no error), where a segment had too few
 * stars the published one; outside, the Tout ZAMS bound as `default` has it.
 */
export function catalogRelationAt(fit: CatalogFit, m: number, out: RelationVerdictInput): boolean {
  const k = calibrationSegment(m);
  const seg = k >= 0 ? fit.segments[k] : undefined;
  if (!seg || seg.mode === 'published') return relationAt('default', m, out);
  out.relation = 'catalog';
  out.logL = seg.slope * Math.log10(m) + seg.intercept;
  out.slope = seg.slope;
  out.scatter = seg.intrinsicScatterDex;
  out.brightAllowance = 0;
  out.scatterIfNoErrors = Math.max(seg.scatterDex, seg.intrinsicScatterDex);
  return true;
}

export const RELATION_NAMES: Record<string, string> = {
  'tout1996-feh': "Tout et al. 1996 ZAMS at the star's [Fe/H]",
  catalog: "the catalog's own robust fit (Eker 2018 break points)",
  [EKER_2018.id]: EKER_2018.name,
  [CLASSIC.id]: CLASSIC.name,
  [TOUT_1996.id]: TOUT_1996.name,
};

/**
 * The Tout et al. 1996 ZAMS at the star's own metallicity (Z = 0.02 x 10^[Fe/H], clamped to the
 * fit's 1e-4..0.03), as a faint bound with the main-sequence brightening allowance above it. A
 * metal-poor star is brighter at a given mass than the solar-metallicity relations say (at
 * 1 M_sun, Z = 1e-4 gives 1.59 L_sun against 0.70 at Z = 0.02, physics-reference.md §5), so this
 * band keeps it from being judged over-luminous, and a metal-rich one from being judged faint.
 */
export function metallicityZamsAt(m: number, feh: number, out: RelationVerdictInput): boolean {
  const z = Math.min(TOUT_MAX_Z, Math.max(TOUT_MIN_Z, metallicityFromFeH(feh)));
  const logL = Math.log10(toutZamsLuminosity(m, z));
  if (!Number.isFinite(logL)) {
    out.relation = '';
    return false;
  }
  out.relation = 'tout1996-feh';
  out.logL = logL;
  out.slope = TOUT_1996.slope(m);
  out.scatter = ZAMS_FAINT_SCATTER;
  out.brightAllowance = MS_BRIGHTENING_DEX;
  out.scatterIfNoErrors = NaN;
  return true;
}
