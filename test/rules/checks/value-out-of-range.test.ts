import { describe, expect, it } from 'vitest';
import { valueOutOfRange } from '../../../rules/checks/value-out-of-range.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

type Cols = Parameters<typeof makeBatch>[0];
const run = (cols: Cols, text: Parameters<typeof makeBatch>[1] = {}, params: Record<string, string> = {}) =>
  runRules([valueOutOfRange], [makeBatch(cols, text)], { params: { 'value-out-of-range': params } });
const total = (r: { checked: number; skipped: Record<string, number> }) => r.checked + Object.values(r.skipped).reduce((a, b) => a + b, 0);

describe('value-out-of-range', () => {
  it('fires on values no star has: logg 10.627 and 10.000 for white dwarfs, a zero distance', () => {
    // The MWDD rows named in its PROVENANCE.md: Gaia DR2 5064259336725948672 (DC, logg 10.627),
    // 2MASS J12101023+3347239 (WD+M, logg 10.000), Ton S 56 (Dpc = 0.0).
    const { findings } = run(
      { logg: { values: [10.627, 10.0, 8.04, 8.0] }, teff: { values: [4749, 6300, 9000, 17284] }, distance: { values: [20, 30, 40, 0] } },
      { stage: ['DC', 'WD+M', 'DA', 'DA'], id: ['a', 'b', 'c', 'Ton S 56'] },
    );
    expect(findings.map((f) => [f.row, f.severity])).toEqual([
      [1, 'error'],
      [2, 'error'],
      [4, 'error'],
    ]);
    // The upper limit 9.8 is logg of 1.4 M_sun at 0.0025 R_sun (physics-reference.md §6, derived).
    expect(findings[0].expected).toMatchObject({ max: 9.8 });
    expect(findings[1].message).toMatch(/round value/);
    expect(findings[2].message).toMatch(/distance must be positive/);
  });

  it('stays silent on white dwarfs, ELM white dwarfs, supergiants and T dwarfs that are what they say', () => {
    // Sirius B (M 1.018, R 0.008098, Teff 25 370 K, logg 8.63; physics-reference.md §6); the ELM
    // white dwarf SDSS J0917+46 (M 0.17, logg 5.48, Teff 11 288 K; Kilic et al. 2007); a red
    // supergiant of 1000 R_sun at logg 0.0 and 3500 K (from memory); WISEP J1217+16 A, T8.5 at
    // 575 K and 0.03 M_sun (PHL PROVENANCE).
    const { findings, reports } = run(
      {
        mass: { values: [1.018, 0.17, 15, 0.03] },
        radius: { values: [0.008098, NaN, 1000, 0.09] },
        teff: { values: [25370, 11288, 3500, 575] },
        logg: { values: [8.63, 5.48, 0.0, 5.0] },
      },
      { stage: ['', '', 'M2 Iab', 'T8.5'] },
    );
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(4);
  });

  it('warns below the hydrogen-burning limit and where a value contradicts its class label', () => {
    // CARMENES GJ 3322 A: M4.0 V with 0.022 M_sun (hydrogen-burning limit 0.075, physics-reference.md
    // §6); V577 Per: K2 V with grid logg 2.5 +- 0.25 (CARMENES PROVENANCE), below the 3.5 dwarf floor
    // even at 3 sigma; MWDD Gaia DR2 6482407368352328704: sdB at 4884 K and logg 7.83 (PROVENANCE).
    const { findings } = run(
      { mass: { values: [0.022, 0.82, NaN] }, logg: { values: [NaN, 2.5, 7.83], err: [NaN, 0.25, NaN] }, teff: { values: [3300, 5000, 4884] } },
      { stage: ['M4.0 V', 'K2 V', 'sdB'] },
    );
    expect(findings.map((f) => [f.row, f.severity])).toEqual([
      [1, 'warning'],
      [2, 'warning'],
      [3, 'warning'],
    ]);
    expect(findings[0].message).toMatch(/hydrogen-burning limit.*brown dwarf/);
    expect(findings[0].expected).toMatchObject({ min: 0.075 });
    // One finding per row names every value that is out: Teff and logg of the sdB row.
    expect(findings[2].columns).toEqual(['teff', 'logg']);
    expect(findings[2].message).toMatch(/labelled `sdB`/);
  });

  it('edge: judged at 3 sigma, so an error bar that reaches the range keeps it silent', () => {
    // An invented logg 2.5 +- 0.4 reaches 3.7 at 3 sigma, inside the 3.5-5.5 dwarf band
    // (physics-reference.md §6); at sigmas = 0 it fires.
    const cols: Cols = { logg: { values: [2.5], err: [0.4] } };
    expect(run(cols, { stage: ['K2 V'] }).findings).toEqual([]);
    expect(run(cols, { stage: ['K2 V'] }, { sigmas: '0' }).findings).toHaveLength(1);
    // An invented mass of 0.07 +- 0.01 M_sun (0.10 at 3 sigma) is not flagged as a brown dwarf.
    expect(run({ mass: { values: [0.07], err: [0.01] } }).findings).toEqual([]);
  });

  it('edge: negative values suggest a log reading (L, M, R) or a dropped sign (Teff); beyond 300 M_sun is an error', () => {
    // A negative L, M or R is most often a log10 in a linear column (physics-reference.md §9):
    // -1.2 reads as 10^-1.2 = 0.0631 M_sun. A Teff of -5772 K is the Sun's (IAU 2015 B3) with its sign lost.
    // R136a1 is about 200-320 M_sun (physics-reference.md §6): 265 is silent, 500 an error.
    const { findings } = run({ mass: { values: [-1.2, 265, 500] }, feh: { values: [0, 0, -6] }, teff: { values: [5000, -5772, 30000] } });
    expect(findings.map((f) => [f.row, f.severity])).toEqual([
      [1, 'error'],
      [2, 'error'],
      [3, 'error'],
    ]);
    expect(findings[0].suggestion?.value).toBeCloseTo(0.0631, 4);
    expect(findings[0].message).toMatch(/log value in a linear column/);
    expect(findings[1].suggestion).toMatchObject({ value: 5772 });
    const row3 = findings[2];
    expect(row3.message).toMatch(/most massive stars known/);
    expect(row3.message).toMatch(/feh = -6 dex is outside -5 to 1 dex/);
    expect(row3.columns).toEqual(['mass', 'feh']);
    // [Fe/H] outside -5..+1 is a warning (from memory: the most iron-poor stars reach about -7).
    const feh = run({ feh: { values: [-6, 0.3, 3] } });
    expect(feh.findings.map((f) => [f.row, f.severity])).toEqual([
      [1, 'warning'],
      [3, 'error'],
    ]);
  });

  it('negative parallaxes are measurements; cells marked unusable are not judged; every row is accounted for', () => {
    // An invented -1.5 mas parallax (noise around zero, common practice to keep) and a -999 code.
    const b = makeBatch({ parallax: { values: [-1.5, 2] }, mass: { values: [-999, NaN] } });
    b.unusable.mass = Uint8Array.from([1, 0]);
    const { findings, reports } = runRules([valueOutOfRange], [b]);
    expect(findings).toEqual([]);
    expect(total(reports[0])).toBe(2);
    const none = run({}, { id: ['x', 'y'] });
    expect(none.reports[0].skipped).toEqual({ 'no range-checked quantity bound': 2 });
  });
});
