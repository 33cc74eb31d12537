import { describe, expect, it } from 'vitest';
import { parallaxDistanceMismatch } from '../../../rules/checks/parallax-distance-mismatch.js';
import { distanceFromParallax } from '../../../rules/physics/stellar.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

type Cols = Parameters<typeof makeBatch>[0];
const run = (cols: Cols, params: Record<string, string> = {}) =>
  runRules([parallaxDistanceMismatch], [makeBatch(cols)], { params: { 'parallax-distance-mismatch': params } });
const rowsOf = (r: ReturnType<typeof run>) => r.findings.filter((f) => f.scope === 'row');
const accounted = (r: ReturnType<typeof run>) => r.reports[0].checked + Object.values(r.reports[0].skipped).reduce((a, b) => a + b, 0);
const fill = (n: number, v: number) => Array.from({ length: n }, () => v);

// Sirius: parallax 379.21 +- 1.58 mas, d = 2.6371 pc (physics-reference.md §6, §7, §11).
const PLX = 379.21;
const PLX_ERR = 1.58;
const D = 2.6371;

describe('parallax-distance-mismatch', () => {
  it('stays silent for Sirius', () => {
    expect(distanceFromParallax(PLX)).toBeCloseTo(D, 4);
    const r = run({ parallax: { values: [PLX], err: [PLX_ERR] }, distance: { values: [D] } });
    expect(r.findings).toEqual([]);
    expect(r.reports[0].checked).toBe(1);
  });

  it('names pc vs kpc when the distance is 1000 times short, and suggests the value in pc', () => {
    const r = run({ parallax: { values: [PLX], err: [PLX_ERR] }, distance: { values: [D / 1000] } });
    expect(r.findings).toHaveLength(1);
    const f = r.findings[0];
    expect(f.severity).toBe('error');
    expect(f.message).toMatch(/kpc/);
    // Read as arcsec the parallax would put Sirius 0.0026 pc away, closer than any star: ruled out.
    expect(f.message).not.toMatch(/arcsec/);
    expect(f.suggestion?.column).toBe('distance');
    expect(f.suggestion?.value).toBeCloseTo(D, 3);
  });

  it('names both readings where both are possible (parallax in arcsec, or distance in kpc)', () => {
    // Sirius's parallax written in arcsec (0.37921) under a mas header: 1000/parallax = 2637 pc.
    const r = run({ parallax: { values: [PLX / 1000], err: [PLX_ERR / 1000] }, distance: { values: [D] } });
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].message).toMatch(/kpc, not pc, or the parallax is in arcsec, not mas/);
  });

  it('names light years', () => {
    // 1 pc = 3.261564 ly (physics-reference.md §7): Sirius at 8.601 ly written under a pc header.
    const r = run({ parallax: { values: [PLX], err: [PLX_ERR] }, distance: { values: [D * 3.261564] } });
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].message).toMatch(/light years/);
    expect(r.findings[0].suggestion?.value).toBeCloseTo(D, 3);
  });

  it('warns for a distance 20 % off a well-measured parallax, and errs beyond a factor of 10', () => {
    const r = run({ parallax: { values: [PLX, PLX], err: [PLX_ERR, PLX_ERR] }, distance: { values: [D * 1.2, D * 20] } });
    expect(rowsOf(r).map((f) => [f.row, f.severity])).toEqual([
      [1, 'warning'],
      [2, 'error'],
    ]);
    expect(r.findings[0].expected?.value).toBeCloseTo(D, 3);
  });

  it('allows for the Gaia zero point at 1 mas', () => {
    // At 1 mas a zero point of a few hundredths of a mas is a 2-3 % distance effect (physics-reference.md
    // §7: DR2 -0.029 mas, EDR3 about -0.021 mas). 1030 pc against 1000/1.000 passes; 1100 pc does not.
    const r = run({ parallax: { values: [1, 1], err: [0.01, 0.01] }, distance: { values: [1030, 1100] } });
    expect(rowsOf(r).map((f) => f.row)).toEqual([2]);
  });

  it('skips low parallax/error, negative and zero parallaxes with their reasons', () => {
    const r = run({ parallax: { values: [0.5, -0.3, 0, PLX, NaN], err: [0.2, 0.1, 0.1, PLX_ERR, 0.1] }, distance: { values: [5000, 3000, 100, D, 10] } });
    expect(r.findings).toEqual([]);
    expect(r.reports[0].checked).toBe(1);
    expect(accounted(r)).toBe(5);
    const reasons = Object.keys(r.reports[0].skipped).join(' | ');
    expect(reasons).toMatch(/parallax\/error at most 5/);
    expect(reasons).toMatch(/zero or negative/);
  });

  it('judges rows without a parallax error by the tolerances, unless told not to', () => {
    const cols: Cols = { parallax: { values: [PLX, PLX] }, distance: { values: [D, D / 1000] } };
    expect(run(cols).findings.map((f) => f.row)).toEqual([2]);
    const strict = run(cols, { judgeWithoutError: 'false' });
    expect(strict.findings).toEqual([]);
    expect(strict.reports[0].checked).toBe(0);
  });

  it('makes one column error when the whole distance column is in kpc', () => {
    const n = 12;
    const r = run({ parallax: { values: fill(n, PLX), err: fill(n, PLX_ERR) }, distance: { values: fill(n, D / 1000) } });
    expect(r.findings).toHaveLength(1);
    expect(r.findings[0].scope).toBe('column');
    expect(r.findings[0].severity).toBe('error');
    expect(r.findings[0].message).toMatch(/kpc/);
  });
});
