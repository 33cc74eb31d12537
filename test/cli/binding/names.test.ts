import { describe, expect, it } from 'vitest';
import { guessName, guessNames, type NameGuess } from '../../../cli/binding/names.js';
import { headerOf, needs } from './fixtures.js';

function byColumn(headers: string[]): Map<string, NameGuess> {
  return new Map(guessNames(headers).map((g) => [g.column, g]));
}

describe('guessName: quantity, log and unit from one header', () => {
  it.each([
    // header, quantity, log, unit text
    ['lum [W]', 'luminosity', false, 'W'],
    ['L_Lsun', 'luminosity', false, 'Lsun'],
    ['logL [Lsun]', 'luminosity', true, 'Lsun'],
    ['mass(Msun)', 'mass', false, 'Msun'],
    ['M_Msol', 'mass', false, 'Msol'],
    ['Teff_K', 'teff', false, 'K'],
    ['T_eff (K)', 'teff', false, 'K'],
    ['log L (L_sun)', 'luminosity', true, 'L_sun'],
    ['log g [cgs]', 'logg', true, 'cgs'],
    ['Dpc', 'distance', false, 'pc'],
    ['Msun', 'mass', false, 'Msun'],
  ] as const)('%s', (header, quantity, log, unit) => {
    const g = guessName(header);
    expect(g.quantity).toBe(quantity);
    expect(g.role).toBe('value');
    expect(g.log).toBe(log);
    expect(g.unit).toBe(unit);
  });

  it('reads `log(L/L.)` as log L in L_sun (`L.` is L_sun in the RSG table)', () => {
    const g = guessName('log(L/L.)');
    expect(g).toMatchObject({ quantity: 'luminosity', log: true, unit: 'Lsun', unitPlace: 'ratio' });
    expect(guessName('log(R/R.)')).toMatchObject({ quantity: 'radius', log: true, unit: 'Rsun' });
  });

  it('reads `R*` as a radius with no unit', () => {
    expect(guessName('R*')).toMatchObject({ quantity: 'radius', log: false, unit: null });
  });

  it('marks logs written in the name', () => {
    for (const h of ['S_LOG_LUM', 'logL', 'log_Teff', 'lgL', 'logT']) expect(guessName(h).log, h).toBe(true);
    expect(guessName('S_LUMINOSITY').log).toBe(false);
    expect(guessName('logg')).toMatchObject({ quantity: 'logg', log: true });
  });

  it('scores a plain name above a decorated one', () => {
    expect(guessName('S_RADIUS').score).toBeGreaterThan(guessName('S_RADIUS_EST').score);
    expect(guessName('Teff').score).toBeGreaterThan(guessName('Teff_cif').score);
    expect(guessName('st_lum').score).toBeGreaterThan(guessName('st_lum_utl').score);
    expect(guessName('S_RADIUS_EST').decoration).toBe('EST');
  });

  it('keeps the case of single letters: `L`, `M`, `R` are quantities, `l`, `m`, `r` are not', () => {
    expect(guessName('L').quantity).toBe('luminosity');
    expect(guessName('M').quantity).toBe('mass');
    expect(guessName('R').quantity).toBe('radius');
    for (const h of ['l', 'b', 'm', 'r', 'ra', 'dec', 'Rmag', 'M_G', 'M_J', 'MKs']) expect(guessName(h).quantity, h).toBeNull();
  });

  it('leaves alone words that change the meaning', () => {
    for (const h of ['mass_loss', 'mass_ratio', 'Teff_ref', 'L_ref', 'st_masslim', 'st_metratio', 'SpTnum', 'r_d', 'loggc', 'parallax_ref', 'Fe_H_ref']) {
      expect(guessName(h).quantity, h).toBeNull();
    }
  });

  it('never takes a planet column for a stellar quantity', () => {
    for (const h of ['pl_rade', 'pl_bmasse', 'P_MASS', 'P_RADIUS', 'P_TEMP_EQUIL', 'pl_eqt']) {
      const g = guessName(h);
      expect(g.quantity, h).toBeNull();
      expect(g.planet, h).toBe(true);
    }
    expect(guessName('pl_name')).toMatchObject({ quantity: 'id', planet: true });
    expect(guessName('pl_name').score).toBeLessThan(guessName('hostname').score);
    expect(guessName('pl_hostname')).toMatchObject({ quantity: 'id', planet: false });
  });
});

describe('guessName: uncertainty conventions', () => {
  it.each([
    // header, role, base, negativeStored
    ['e_Teff', 'sym', 'Teff', false],
    ['Teff_err', 'sym', 'Teff', false],
    ['Teff_error', 'sym', 'Teff', false],
    ['st_masserr1', 'hi', 'st_mass', false],
    ['st_masserr2', 'lo', 'st_mass', true],
    ['S_MASS_ERROR_MIN', 'lo', 'S_MASS', true],
    ['S_MASS_ERROR_MAX', 'hi', 'S_MASS', false],
    ['lum_lo', 'lo', 'lum', false],
    ['lum_hi', 'hi', 'lum', false],
    ['E_lum', 'hi', 'lum', false],
    ['Mbol_sig+', 'hi', 'Mbol', false],
    ['Mbol_sig-', 'lo', 'Mbol', false],
    ['parallax_error_dr2', 'sym', 'parallax_dr2', false],
    ['eM_Msol', 'sym', 'M_Msol', false],
  ] as const)('%s', (header, role, base, negativeStored) => {
    const g = guessName(header);
    expect(g.role).toBe(role);
    expect(g.base).toBe(base);
    expect(g.negativeStored).toBe(negativeStored);
  });

  it('gives an uncertainty the quantity and log of its value column', () => {
    expect(guessName('S_LOG_LUM_ERROR_MIN')).toMatchObject({ quantity: 'luminosity', log: true, role: 'lo', negativeStored: true });
    expect(guessName('eL_Lsol')).toMatchObject({ quantity: 'luminosity', unit: 'Lsol', role: 'sym' });
  });
});

describe('guessNames: what the other headers settle', () => {
  it('pairs CDS `e_X` (lower) with `E_X` (upper), and leaves a lone one symmetric', () => {
    const pair = byColumn(['lum', 'e_lum', 'E_lum']);
    expect(pair.get('e_lum')!.role).toBe('lo');
    expect(pair.get('E_lum')!.role).toBe('hi');
    expect(byColumn(['lum', 'E_lum']).get('E_lum')!.role).toBe('sym');
    expect(byColumn(['lum', 'e_lum']).get('e_lum')!.role).toBe('sym');
  });

  it('drops a glued `e` prefix whose base is not a column', () => {
    expect(byColumn(['eTeff']).get('eTeff')!.quantity).toBeNull();
    expect(byColumn(['Teff', 'eTeff']).get('eTeff')).toMatchObject({ quantity: 'teff', role: 'sym', base: 'Teff' });
  });

  it('finds the value an abbreviated error belongs to (`Lberr` -> `Lbol`)', () => {
    expect(byColumn(['Lbol', 'Lberr', 'Teff']).get('Lberr')).toMatchObject({ quantity: 'luminosity', base: 'Lbol' });
  });
});

// Header lines of the real catalogs, as in ../shared/reference-data (see each PROVENANCE.md). The
// inline lists keep the tests running in a fresh clone; the file checks below confirm they match.
const CARMENES = [
  'ID_star', 'ID_system', 'Name', 'GJ', 'Karmn', 'SpT', 'SpTnum', 'Type', 'Class', 'Component', 'M_Msol', 'eM_Msol',
  'R_Rsol', 'eR_Rsol', 'MR_ref', 'L_Lsol', 'eL_Lsol', 'L_ref', 'MG_mag', 'eMG_mag', 'Teff_K', 'eTeff_K', 'Teff_ref',
  'logg', 'elogg', 'Fe_H', 'Fe_H_ref', 'q', 'GaiaDR3_id', 'ra', 'dec', 'parallax', 'parallax_error', 'parallax_ref',
  'rv', 'ruwe', 'G_mag', 'eG_mag', 'Planet_ref',
];
const NASA = [
  'pl_name', 'hostname', 'sy_snum', 'pl_orbper', 'pl_rade', 'pl_radeerr1', 'pl_bmasse', 'pl_eqt', 'st_spectype',
  'st_teff', 'st_tefferr1', 'st_tefferr2', 'st_tefflim', 'st_rad', 'st_raderr1', 'st_raderr2', 'st_radlim', 'st_mass',
  'st_masserr1', 'st_masserr2', 'st_masslim', 'st_met', 'st_meterr1', 'st_meterr2', 'st_metlim', 'st_metratio',
  'st_logg', 'st_loggerr1', 'st_loggerr2', 'st_logglim', 'rastr', 'ra', 'decstr', 'dec', 'sy_dist', 'sy_disterr1',
  'sy_disterr2', 'sy_vmag', 'sy_kmag', 'sy_gaiamag',
];
const PHL = [
  'P_NAME', 'P_MASS', 'P_MASS_ERROR_MIN', 'P_RADIUS', 'S_NAME', 'S_RA', 'S_DEC', 'S_MAG', 'S_DISTANCE',
  'S_DISTANCE_ERROR_MIN', 'S_DISTANCE_ERROR_MAX', 'S_METALLICITY', 'S_MASS', 'S_MASS_ERROR_MIN', 'S_MASS_ERROR_MAX',
  'S_RADIUS', 'S_RADIUS_ERROR_MIN', 'S_RADIUS_ERROR_MAX', 'S_TYPE', 'S_LOG_LUM', 'S_LOG_LUM_ERROR_MIN',
  'S_LOG_LUM_ERROR_MAX', 'S_AGE', 'S_TEMPERATURE', 'S_TEMPERATURE_ERROR_MIN', 'S_TEMPERATURE_ERROR_MAX', 'S_LOG_G',
  'P_TEMP_EQUIL', 'S_RADIUS_EST', 'S_TYPE_TEMP', 'S_LUMINOSITY', 'S_SNOW_LINE',
];
const WILD = ['pl_name', 'pl_rade', 'pl_bmasse', 'pl_orbsmax', 'pl_orbeccen', 'st_lum', 'st_mass', 'sy_snum', 'sy_pnum', 'pl_dens', 'st_teff', 'st_rad', 'pl_temp'];
const MWDD = ['wdid', 'icrsra', 'icrsdec', 'spectype', 'teff', 'logg', 'Dpc'];
const RSG = [
  'Alias', 'source_id', 'source_id_dr2', 'SpType_a', 'Spectral Type', 'Teff', 'Teff_error', 'ra', 'dec', 'parallax',
  'parallax_error', 'l', 'b', 'r_med_geo', 'r_lo_geo', 'r_hi_geo', 'parallax_dr2', 'parallax_error_dr2', 'DM',
  'DM_sig+', 'Mbol', 'Mbol_sig+', 'Mbol_sig-', 'log(R/R.)', 'R*', 'log(L/L.)', 'log_Teff', 'x_kpc', 'mass_loss',
  'metallicity', 'metallicity_error', 'mass_ratio', 'best_class_name',
];

function values(headers: string[]): Record<string, string> {
  const out: Record<string, string> = {};
  for (const g of guessNames(headers)) {
    if (g.quantity === null) continue;
    out[g.column] = g.role === 'value' ? g.quantity : `${g.quantity}.${g.role}<${g.base}${g.negativeStored ? ',neg' : ''}`;
  }
  return out;
}

describe('real catalog headers', () => {
  it('CARMENES (Cifuentes et al. 2025): M_Msol, R_Rsol, L_Lsol, Teff_K with e-prefixed errors', () => {
    expect(values(CARMENES)).toEqual({
      ID_star: 'id', Name: 'id', Karmn: 'id', SpT: 'stage', Type: 'stage', Class: 'stage', GaiaDR3_id: 'id',
      M_Msol: 'mass', eM_Msol: 'mass.sym<M_Msol', R_Rsol: 'radius', eR_Rsol: 'radius.sym<R_Rsol',
      L_Lsol: 'luminosity', eL_Lsol: 'luminosity.sym<L_Lsol', Teff_K: 'teff', eTeff_K: 'teff.sym<Teff_K',
      logg: 'logg', elogg: 'logg.sym<logg', Fe_H: 'feh', parallax: 'parallax', parallax_error: 'parallax.sym<parallax',
    });
    const g = byColumn(CARMENES);
    // `Name` is the readable name; `ID_star` is a row counter in this file. `Class` means multiplicity.
    expect(g.get('Name')!.score).toBeGreaterThan(g.get('ID_star')!.score);
    expect(g.get('SpT')!.score).toBeGreaterThan(g.get('Class')!.score);
  });

  it('NASA Exoplanet Archive: err1 upper, err2 lower stored negative, lim flags ignored, pl_* never stellar', () => {
    expect(values(NASA)).toEqual({
      pl_name: 'id', hostname: 'id', st_spectype: 'stage',
      st_teff: 'teff', st_tefferr1: 'teff.hi<st_teff', st_tefferr2: 'teff.lo<st_teff,neg',
      st_rad: 'radius', st_raderr1: 'radius.hi<st_rad', st_raderr2: 'radius.lo<st_rad,neg',
      st_mass: 'mass', st_masserr1: 'mass.hi<st_mass', st_masserr2: 'mass.lo<st_mass,neg',
      st_met: 'feh', st_meterr1: 'feh.hi<st_met', st_meterr2: 'feh.lo<st_met,neg',
      st_logg: 'logg', st_loggerr1: 'logg.hi<st_logg', st_loggerr2: 'logg.lo<st_logg,neg',
      sy_dist: 'distance', sy_disterr1: 'distance.hi<sy_dist', sy_disterr2: 'distance.lo<sy_dist,neg',
    });
  });

  it('PHL: _ERROR_MIN (negative) / _ERROR_MAX, both S_LOG_LUM and S_LUMINOSITY, S_RADIUS over S_RADIUS_EST', () => {
    const v = values(PHL);
    expect(v).toMatchObject({
      P_NAME: 'id', S_NAME: 'id', S_MASS: 'mass', S_MASS_ERROR_MIN: 'mass.lo<S_MASS,neg', S_MASS_ERROR_MAX: 'mass.hi<S_MASS',
      S_LOG_LUM: 'luminosity', S_LOG_LUM_ERROR_MIN: 'luminosity.lo<S_LOG_LUM,neg', S_LUMINOSITY: 'luminosity',
      S_TEMPERATURE: 'teff', S_LOG_G: 'logg', S_METALLICITY: 'feh', S_DISTANCE: 'distance', S_TYPE: 'stage',
    });
    for (const planet of ['P_MASS', 'P_MASS_ERROR_MIN', 'P_RADIUS', 'P_TEMP_EQUIL']) expect(v[planet], planet).toBeUndefined();
    const g = byColumn(PHL);
    expect(g.get('S_LOG_LUM')!.log).toBe(true);
    expect(g.get('S_RADIUS')!.score).toBeGreaterThan(g.get('S_RADIUS_EST')!.score);
    expect(g.get('S_NAME')!.score).toBeGreaterThan(g.get('P_NAME')!.score);
  });

  it('wild-mixed-units: st_lum carries no unit in its name', () => {
    expect(values(WILD)).toEqual({ pl_name: 'id', st_lum: 'luminosity', st_mass: 'mass', st_teff: 'teff', st_rad: 'radius' });
    expect(byColumn(WILD).get('st_lum')).toMatchObject({ unit: null, log: false });
  });

  it('MWDD: teff, logg, and Dpc as a distance in pc', () => {
    expect(values(MWDD)).toEqual({ wdid: 'id', spectype: 'stage', teff: 'teff', logg: 'logg', Dpc: 'distance' });
    expect(byColumn(MWDD).get('Dpc')!.unit).toBe('pc');
  });

  it('RSG (Healy et al. 2024): log(L/L.), R*, Teff; galactic l and mass_loss are not quantities', () => {
    const v = values(RSG);
    expect(v).toMatchObject({
      'log(L/L.)': 'luminosity', 'R*': 'radius', 'log(R/R.)': 'radius', Teff: 'teff', Teff_error: 'teff.sym<Teff',
      log_Teff: 'teff', Mbol: 'mbol', 'Mbol_sig+': 'mbol.hi<Mbol', 'Mbol_sig-': 'mbol.lo<Mbol', parallax: 'parallax',
      parallax_error_dr2: 'parallax.sym<parallax_dr2', metallicity: 'feh',
    });
    for (const h of ['l', 'b', 'r_med_geo', 'r_lo_geo', 'mass_loss', 'mass_ratio', 'x_kpc', 'DM', 'best_class_name']) expect(v[h], h).toBeUndefined();
  });

  const files: [string, string[]][] = [
    ['carmenes-mdwarfs/cif03.full_table.csv', CARMENES],
    ['nasa-exoplanet-archive/PSCompPars_2024-10-15.csv', NASA],
    ['phl-exoplanet-catalog/phl_exoplanet_catalog.csv', PHL],
    ['wild-mixed-units/exoplanet_data_tmp.csv', WILD],
    ['mwdd-white-dwarfs/MWDD-export.csv', MWDD],
    ['massive-luminous-stars/RSG_catalog_4_11_24.csv', RSG],
  ];
  for (const [rel, inline] of files) {
    const { present, label } = needs(rel);
    it.skipIf(!present)(`${rel}: the real header holds the listed columns and guesses the same${label}`, () => {
      const header = headerOf(rel);
      for (const h of inline) expect(header, h).toContain(h);
      const full = values(header);
      const listed = values(inline);
      for (const [col, q] of Object.entries(listed)) expect(full[col], col).toBe(q);
    });
  }
});
