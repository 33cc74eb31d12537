import { describe, expect, it } from 'vitest';
import {
  CALIBRATION_SEGMENTS,
  CalibrationSummary,
  fitCatalogRelation,
  type CalibrationState,
} from '../../../rules/physics/calibration.js';
import { EKER_2018 } from '../../../rules/physics/mass-luminosity.js';
import { rng } from '../../helpers/rng.js';

/** Standard normal deviates from a seeded uniform generator (Box-Muller, common practice). */
function normal(r: () => number): () => number {
  return () => Math.sqrt(-2 * Math.log(1 - r())) * Math.cos(2 * Math.PI * r());
}

interface Truth {
  slope: number;
  intercept: number;
}

/**
 * A synthetic main-sequence catalog: log M uniform in each Eker 2018 segment, log L on the given
 * lines plus Gaussian intrinsic scatter and measurement noise (stated as the star's error), and a
 * share of gross outliers 1-3 dex off (slips the fit must shrug off).
 */
function catalog(lines: readonly Truth[], opts: { perSegment: number; intrinsic: number; meas: number; outliers: number; seed: number }) {
  const r = rng(opts.seed);
  const g = normal(r);
  const stars: { m: number; logL: number; sigma: number }[] = [];
  CALIBRATION_SEGMENTS.forEach((seg, k) => {
    const lo = Math.log10(seg.lower);
    const hi = Math.log10(seg.upper);
    for (let n = 0; n < opts.perSegment; n++) {
      const x = lo + (hi - lo) * (0.001 + 0.998 * r());
      let y = lines[k].slope * x + lines[k].intercept + opts.intrinsic * g() + opts.meas * g();
      if (r() < opts.outliers) y += (r() < 0.5 ? -1 : 1) * (1 + 2 * r());
      stars.push({ m: 10 ** x, logL: y, sigma: opts.meas > 0 ? opts.meas : NaN });
    }
  });
  return stars;
}

function summarise(stars: readonly { m: number; logL: number; sigma: number }[]): CalibrationSummary {
  const s = new CalibrationSummary();
  for (const st of stars) s.add(st.m, st.logL, st.sigma);
  return s;
}

// Known lines that differ from Eker et al. 2018 (Table 4) by up to 0.4 in slope and 0.15 dex.
const SHIFTED: Truth[] = CALIBRATION_SEGMENTS.map((seg, k) => ({ slope: seg.slope + (k % 2 ? 0.4 : -0.3), intercept: seg.intercept + 0.05 * (k - 2) }));

describe('the catalog fit of the mass-luminosity relation', () => {
  const stars = catalog(SHIFTED, { perSegment: 3000, intrinsic: 0.08, meas: 0.06, outliers: 0.03, seed: 11 });
  const fit = fitCatalogRelation(summarise(stars));

  it('recovers known slopes and intercepts from a catalog generated with them, outliers and all', () => {
    fit.segments.forEach((s, k) => {
      expect(s.mode, `segment ${k}`).toBe('line');
      // Within 4 sigma of the stated uncertainty, and that uncertainty is a sensible size.
      expect(Math.abs(s.slope - SHIFTED[k].slope) / s.slopeErr, `slope ${k}: ${s.slope} +- ${s.slopeErr}`).toBeLessThan(4);
      const atPivot = s.slope * s.pivotLogM + s.intercept;
      const truth = SHIFTED[k].slope * s.pivotLogM + SHIFTED[k].intercept;
      expect(Math.abs(atPivot - truth) / s.offsetErrDex, `log L at the pivot, segment ${k}`).toBeLessThan(4);
      expect(s.slopeErr).toBeLessThan(0.1);
      expect(s.offsetErrDex).toBeLessThan(0.005);
    });
  });

  it('states the intrinsic scatter with the measurement errors removed in quadrature', () => {
    for (const s of fit.segments) {
      // sqrt(0.08^2 + 0.06^2) = 0.1 dex in all; 0.08 dex intrinsic; the error histogram has 0.01 dex cells.
      expect(s.scatterDex).toBeCloseTo(0.1, 1);
      expect(Math.abs(s.scatterDex - 0.1)).toBeLessThan(0.01);
      expect(Math.abs(s.intrinsicScatterDex - 0.08)).toBeLessThan(0.012);
      expect(s.medianMeasurementErrorDex).toBeCloseTo(0.065, 3);
    }
  });

  it('says the fit differs from Eker 2018 where it was generated to differ, and not where it was not', () => {
    expect(fit.segments.every((s) => s.differs)).toBe(true);
    const same = fitCatalogRelation(
      summarise(catalog(CALIBRATION_SEGMENTS.map((s) => ({ slope: s.slope, intercept: s.intercept })), { perSegment: 800, intrinsic: 0.1, meas: 0, outliers: 0.02, seed: 5 })),
    );
    for (const s of same.segments) {
      expect(s.differs, `${s.lower}-${s.upper}: offset ${s.offsetSigma} sigma, slope ${s.slopeSigma} sigma`).toBe(false);
      expect(s.publishedSlope).toBe(EKER_2018.slope(Math.sqrt(s.lower * s.upper)));
    }
  });

  it('keeps the published segment where too few stars are, and fits only an offset where their masses are too close together', () => {
    const few = summarise(catalog(SHIFTED, { perSegment: 10, intrinsic: 0.08, meas: 0, outliers: 0, seed: 2 }));
    expect(fitCatalogRelation(few).segments.every((s) => s.mode === 'published')).toBe(true);
    const narrow = new CalibrationSummary();
    const r = normal(rng(3));
    // 200 stars at 1.50 +- 0.01 M_sun, 0.2 dex above Eker (whose slope is 4.329 there).
    for (let n = 0; n < 200; n++) {
      const m = 1.5 * 10 ** (0.004 * r());
      narrow.add(m, EKER_2018.logL(m) + 0.2 + 0.05 * r(), NaN);
    }
    const s = fitCatalogRelation(narrow).segments[3];
    expect(s.mode).toBe('offset');
    expect(s.slope).toBe(4.329);
    expect(s.offsetDex).toBeCloseTo(0.2, 1);
    expect(s.differs).toBe(true);
  });
});

describe('the first-pass summary', () => {
  const stars = catalog(SHIFTED, { perSegment: 400, intrinsic: 0.1, meas: 0.05, outliers: 0.02, seed: 9 });

  it('merges: two halves give the fit the whole gives, and JSON carries it unchanged', () => {
    const whole = summarise(stars);
    const a = summarise(stars.slice(0, 1000));
    const b = summarise(stars.slice(1000));
    const aState = JSON.parse(JSON.stringify(a.toState())) as CalibrationState;
    const bState = JSON.parse(JSON.stringify(b.toState())) as CalibrationState;
    const before = JSON.stringify(aState);
    const merged = CalibrationSummary.merge(aState, bState);
    // Pure: the inputs are left as they were.
    expect(JSON.stringify(aState)).toBe(before);
    // Commutative (the sums are added in the other order, exactly equal in IEEE arithmetic).
    expect(CalibrationSummary.merge(bState, aState)).toEqual(merged);
    const f1 = fitCatalogRelation(whole);
    const f2 = fitCatalogRelation(CalibrationSummary.fromState(merged));
    f1.segments.forEach((s, k) => {
      expect(f2.segments[k].slope).toBeCloseTo(s.slope, 9);
      expect(f2.segments[k].intercept).toBeCloseTo(s.intercept, 9);
      expect(f2.segments[k].scatterDex).toBeCloseTo(s.scatterDex, 9);
    });
    expect(CalibrationSummary.fromState(merged).stars).toBe(stars.length);
  });

  it('stays bounded: a million stars fill no more cells than the grid has', () => {
    const s = new CalibrationSummary();
    const r = rng(1);
    for (let n = 0; n < 1_000_000; n++) {
      const m = 0.18 + 30 * r();
      s.add(m, EKER_2018.logL(m) + 6 * (r() - 0.5), NaN);
    }
    const cells = s.toState().cells.length;
    // 6 segments, 0.02 dex mass bins (112 in all) x 300 residual cells.
    expect(cells).toBeLessThanOrEqual(112 * 300);
    expect(JSON.stringify(s.toState()).length).toBeLessThan(4_000_000);
  });

  it('rejects a state that is not its own', () => {
    expect(() => CalibrationSummary.fromState({ kind: 'something else' } as unknown as CalibrationState)).toThrow(/calibration state/);
  });
});
