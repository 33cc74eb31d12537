import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { REFERENCE, SKIP_SHARED, checkWithReport, hasShared, tempDir, type Report } from '../helpers/cli.js';

// The consistency rules (Stefan-Boltzmann, surface gravity, bolometric magnitude, parallax) on real
// catalogs in ../shared/reference-data; each folder's PROVENANCE.md gives the source and the quirks
// quoted below. The rates asserted are the measured ones with some headroom.
const SB = 'stefan-boltzmann-mismatch';
const LOGG = 'surface-gravity-mismatch';
const MBOL = 'bolometric-magnitude-mismatch';
const PLX = 'parallax-distance-mismatch';
const MINE = [SB, LOGG, MBOL, PLX];

const ref = (p: string) => join(REFERENCE, p);
const of = (r: Report, rule: string, scope: 'row' | 'column' = 'row') => r.findings.filter((f) => f.rule === rule && f.scope === scope);
const perInput = (r: Report, rule: string) => r.rules.find((x) => x.id === rule)!.perInput[0];
const ids = (r: Report, rule: string, severity?: string) => new Set(of(r, rule).filter((f) => !severity || f.severity === severity).map((f) => f.id));

/** One run per catalog and arguments, shared by the tests that read it. */
const runs = new Map<string, Report>();
function reportFor(path: string, ...extra: string[]): Report {
  const key = [path, ...extra].join(' ');
  let r = runs.get(key);
  if (!r) {
    r = checkWithReport([ref(path), ...extra, '--fail-on', 'never']).report;
    runs.set(key, r);
  }
  return r;
}

function accountingHolds(r: Report) {
  for (const rule of r.rules) {
    const pi = rule.perInput[0];
    const skipped = Object.values(pi.skipped).reduce((a, b) => a + b, 0);
    expect(pi.checked + skipped, rule.id).toBe(r.inputs[0].rows);
  }
}

describe.skipIf(!hasShared)('consistency rules on real catalogs (../shared/reference-data)', () => {
  if (!hasShared) it.skip(SKIP_SHARED, () => {});

  it('red supergiants: the 0.0213 dex and M_bol,sun = 4.80 conventions are one note each, no row finding', () => {
    // PROVENANCE.md: log L sits exactly 0.0213 dex above R^2 (T/5772 K)^4 on every row, and
    // log L = (4.80 - Mbol)/2.5 on every row (0.06 mag off the IAU 2015 B2 scale).
    const { report } = checkWithReport([ref('massive-luminous-stars/RSG_catalog_4_11_24.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    expect(of(report, SB)).toEqual([]);
    expect(of(report, MBOL)).toEqual([]);
    expect(perInput(report, SB).checked).toBe(640);
    const sbNote = of(report, SB, 'column');
    expect(sbNote).toHaveLength(1);
    expect(sbNote[0].values.medianOffsetDex as number).toBeCloseTo(0.0213, 3);
    expect(sbNote[0].message).toMatch(/older solar Teff or L_sun/);
    const mbNote = of(report, MBOL, 'column');
    expect(mbNote).toHaveLength(1);
    expect(mbNote[0].values.medianOffsetMag as number).toBeCloseTo(0.06, 3);
    expect(mbNote[0].values.knownZeroPoint).toBe(4.8);
  });

  it('red supergiants: DR3 parallaxes agree with the Bailer-Jones distances where parallax/error > 5', () => {
    // PROVENANCE.md: parallax [mas, DR3] and r_med_geo [pc, Bailer-Jones EDR3]. The geometric distances
    // sit a median 7 % below 1/parallax (zero point and prior), inside the propagated errors.
    const { report } = checkWithReport([ref('massive-luminous-stars/RSG_catalog_4_11_24.csv'), '--bind', 'r_med_geo=distance', '--fail-on', 'never']);
    const pi = perInput(report, PLX);
    expect(pi.status).toBe('ran');
    // Measured: 550 rows judged, 0 flagged.
    expect(pi.checked).toBeGreaterThan(500);
    expect(of(report, PLX)).toEqual([]);
  });

  it('CARMENES: Stefan-Boltzmann flags few rows on the 100 K Teff grid, none as errors', () => {
    const report = reportFor('carmenes-mdwarfs/cif03.full_table.csv');
    accountingHolds(report);
    const judged = perInput(report, SB).checked;
    expect(judged).toBe(1698);
    // Measured: 9 warnings in 1698 judged rows (0.53 %), 0 errors. Allow 1 %.
    expect(of(report, SB).length / judged).toBeLessThanOrEqual(0.01);
    expect(ids(report, SB, 'error').size).toBe(0);
    // PROVENANCE.md: LSPM J1925+0938 (M8.5 V), L = 1.16e-3 against 3.4e-4 from R and T, 0.54 dex; its
    // radius error (0.0215 on 0.1064 R_sun, 0.16 dex in 2 log R) keeps it at 2.8 sigma, so it is not
    // flagged. UCAC4 354-189365 (0.51 dex off, radius known to 3 %) is.
    expect(ids(report, SB).has('LSPM J1925+0938')).toBe(false);
    expect(ids(report, SB).has('UCAC4 354-189365')).toBe(true);
  });

  it('CARMENES: the 0.5 dex model-grid logg is judged with its stated 0.25 error and noted once', () => {
    const report = reportFor('carmenes-mdwarfs/cif03.full_table.csv');
    const judged = perInput(report, LOGG).checked;
    const rows = of(report, LOGG);
    // Measured: 429 warnings in 1698 judged rows (25 %), 0 errors: the grid logg disagrees with M and
    // R by up to 2.8 dex (PROVENANCE.md). Allow 30 %, and no error at all.
    expect(rows.length / judged).toBeLessThanOrEqual(0.3);
    expect(rows.filter((f) => f.severity === 'error')).toEqual([]);
    // PROVENANCE.md: V577 Per (K2 V), logg 2.5 against 4.56 from M and R.
    expect(ids(report, LOGG).has('V577 Per')).toBe(true);
    const note = of(report, LOGG, 'column');
    expect(note).toHaveLength(1);
    expect(note[0].values.gridStepDex).toBe(0.5);
  });

  it('Schweitzer et al. 2019: L matches R^2 T^4, and the implausible spectroscopic logg is flagged', () => {
    // PROVENANCE.md: Lum matches R^2 (T/5772)^4 to 0.0006 dex; 1RXS J050156.7+010845 has logg 5.13
    // against 4.67 from M and R. The mass and luminosity columns are chosen explicitly (several candidates).
    const { report } = checkWithReport([
      ref('carmenes-mdwarfs/schweitzer19.csv'),
      ...['Lum=luminosity', 'Lbol=none', 'MassMR=mass', 'MassMMKs=none', 'MassLogg=none', 'MassP=none'].flatMap((b) => ['--bind', b]),
      '--fail-on',
      'never',
    ]);
    expect(perInput(report, SB).checked).toBe(293);
    expect(of(report, SB)).toEqual([]);
    // Measured: 8 logg warnings in 293 rows (spectroscopic logg runs 0.07 dex high on average).
    expect(of(report, LOGG).length).toBeLessThanOrEqual(15);
    expect(ids(report, LOGG).has('1RXS J050156.7+010845')).toBe(true);
  });

  it('PHL: the real inconsistent hosts are flagged, error-level findings stay rare', () => {
    const { report } = checkWithReport([ref('phl-exoplanet-catalog/phl_exoplanet_catalog.csv'), '--fail-on', 'never']);
    accountingHolds(report);
    const judged = perInput(report, SB).checked;
    const rows = of(report, SB);
    // Measured: 75 of 5035 judged rows (1.5 %), 5 of them errors (0.10 %). Allow 2 % and 0.2 %.
    expect(rows.length / judged).toBeLessThanOrEqual(0.02);
    expect(rows.filter((f) => f.severity === 'error').length / judged).toBeLessThanOrEqual(0.002);
    // PROVENANCE.md: TOI-2406 (log L 0.531 against -2.48 from R^2 T^4) and DH Tau (-0.21 against -1.62).
    expect(ids(report, SB, 'error').has('TOI-2406')).toBe(true);
    expect(ids(report, SB, 'error').has('DH Tau')).toBe(true);
    // HD 187085's linear value in the log column is the unit rule's; it is not judged again here.
    expect(ids(report, SB).has('HD 187085')).toBe(false);
    expect(report.findings.some((f) => f.id === 'HD 187085' && f.rule === 'luminosity-unit-mixup')).toBe(true);
    // No logg error column: the default 0.1 dex applies. Measured: 34 warnings (0.7 %), 0 errors.
    expect(of(report, LOGG).length / perInput(report, LOGG).checked).toBeLessThanOrEqual(0.01);
    expect(ids(report, LOGG).has('HD 113538')).toBe(true);
  });

  it('NASA composite table: logg against M and R flags the known inconsistent hosts as warnings', () => {
    const { report } = checkWithReport([ref('nasa-exoplanet-archive/PSCompPars_2024-10-15.csv'), '--fail-on', 'never']);
    const rows = of(report, LOGG);
    // Measured: 34 warnings in 5488 judged rows (0.6 %), 0 errors.
    expect(rows.length / perInput(report, LOGG).checked).toBeLessThanOrEqual(0.01);
    expect(rows.filter((f) => f.severity === 'error')).toEqual([]);
    // PROVENANCE.md: DH Tau (logg 4.00 against 5.09) and HAT-P-56 (3.39 against 4.26).
    expect(ids(report, LOGG).has('DH Tau')).toBe(true);
    expect(ids(report, LOGG).has('HAT-P-56')).toBe(true);
  });

  it('LIFE: distance and parallax agree on every row; MWDD and Mamajek give nothing to these rules', () => {
    // LIFE PROVENANCE.md: dist * plx / 1000 is 1 within 0.1 % on every row (no parallax errors given).
    const life = checkWithReport([ref('life-nearby-stars/LIFE-StarCat4_dec2024.csv'), '--fail-on', 'never']).report;
    expect(perInput(life, PLX).checked).toBe(3919);
    expect(perInput(life, PLX).details.rowsJudgedWithoutError).toBe(3919);
    expect(of(life, PLX)).toEqual([]);
    // MWDD has teff, logg and distance only: the gravity rule is not run (no M, R) rather than misapplied.
    const mwdd = checkWithReport([ref('mwdd-white-dwarfs/MWDD-export.csv'), '--fail-on', 'never']).report;
    expect(perInput(mwdd, LOGG).status).toBe('skipped');
    expect(mwdd.findings.filter((f) => MINE.includes(f.rule))).toEqual([]);
    // Mamajek's dwarf sequence is on the IAU scale (M_bol = 4.74 - 2.5 log L to rounding).
    const mam = checkWithReport([ref('life-nearby-stars/Mamajek2022-04-16.csv'), '--fail-on', 'never']).report;
    expect(perInput(mam, MBOL).checked).toBeGreaterThan(100);
    expect(mam.findings.filter((f) => MINE.includes(f.rule))).toEqual([]);
  });
});

describe.skipIf(!hasShared)('consistency rules on the LIFE sdb VOTable', () => {
  if (!hasShared) it.skip(SKIP_SHARED, () => {});

  it('Stefan-Boltzmann stays silent on the SED-fit luminosities', (ctx) => {
    // LIFE PROVENANCE.md: lstar agrees with R^2 (T/5772)^4 to better than 0.004 dex on all 149 rows.
    let report: Report;
    try {
      report = checkWithReport([ref('life-nearby-stars/sdb_30pc_09_02_2024.xml'), '--fail-on', 'never']).report;
    } catch {
      ctx.skip('this build cannot read the VOTable yet');
      return;
    }
    expect(perInput(report, SB).checked).toBe(149);
    expect(report.findings.filter((f) => f.rule === SB)).toEqual([]);
  });
});

describe('reference stars through the whole pipeline', () => {
  it('the Sun, Sirius A and B and Vega stay silent on every consistency rule', () => {
    // Sun: IAU 2015 B3 nominal values, logg 4.438 and M_bol 4.74 (physics-reference.md §1, §7).
    // Sirius A and B: physics-reference.md §6 (Bond et al. 2017 masses); M_bol from L on the IAU
    // scale (§11: 1.258 for A, 8.768 for B derived the same way); Sirius B's distance is 1000/374.49
    // from its own Gaia parallax (§6). Vega: Yoon et al. 2010 set with the equatorial radius (§6,
    // trap T8; 0.18 dex off R^2 T^4), parallax 130.23 +- 0.36 mas, d = 7.68 pc.
    const csv = [
      'star_id,mass_Msun,e_mass_Msun,radius_Rsun,e_radius_Rsun,lum_Lsun,e_lum_Lsun,teff_K,e_teff_K,logg,e_logg,Mbol,parallax,parallax_error,distance_pc',
      'Sun,1,,1,,1,,5772,,4.438,,4.74,,,',
      'Sirius A,2.063,0.023,1.713,0.009,24.7,0.7,9845,64,4.33,0.1,1.258,379.21,1.58,2.637',
      'Sirius B,1.018,0.011,0.008098,,0.02448,,25000,,8.63,,8.768,374.49,,2.6703',
      'Vega,2.135,0.074,2.818,,40.12,0.45,9602,180,,,0.7316,130.23,0.36,7.68',
    ].join('\n');
    const path = join(tempDir(), 'reference-stars.csv');
    writeFileSync(path, csv + '\n');
    const { report } = checkWithReport([path, '--fail-on', 'never']);
    expect(report.inputs[0].rows).toBe(4);
    for (const rule of MINE) expect(perInput(report, rule).status, rule).toBe('ran');
    expect(perInput(report, SB).checked).toBe(4);
    expect(perInput(report, LOGG).checked).toBe(3);
    expect(perInput(report, MBOL).checked).toBe(4);
    expect(perInput(report, PLX).checked).toBe(3);
    expect(report.findings.filter((f) => MINE.includes(f.rule))).toEqual([]);
  });
});
