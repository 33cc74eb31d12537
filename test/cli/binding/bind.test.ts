import { describe, expect, it } from 'vitest';
import { bindColumns } from '../../../cli/binding/bind.js';
import { BindingError, type Binding, type BindOptions, type ColumnBinding } from '../../../cli/binding/types.js';
import type { ColumnMeta } from '../../../cli/readers/types.js';
import { meta, needs, readReference, textBatch } from './fixtures.js';

const NO_OPTIONS: BindOptions = { bind: {}, units: {} };

function bound(b: Binding, quantity: string): ColumnBinding {
  const c = b.columns.find((x) => x.quantity === quantity);
  if (!c) throw new Error(`${quantity} is not bound; bound: ${b.columns.map((x) => x.quantity).join(', ')}`);
  return c;
}

function bindingError(fn: () => unknown): BindingError {
  try {
    fn();
  } catch (e) {
    if (e instanceof BindingError) return e;
    throw e;
  }
  throw new Error('expected a BindingError');
}

/** Stefan-Boltzmann in nominal solar units, L = R^2 (T/5772 K)^4 (IAU 2015 B3 Teff_sun). */
const sb = (r: number, t: number) => r * r * (t / 5772) ** 4;

describe('order of trust', () => {
  it('--unit beats the metadata unit, which beats a unit in the header', () => {
    const m = meta(['L_Lsun'], { L_Lsun: { unit: 'W' } });
    expect(bound(bindColumns(m, null, NO_OPTIONS), 'luminosity')).toMatchObject({ unit: 'W', unitSource: 'metadata' });
    const opt = bindColumns(m, null, { bind: {}, units: { L_Lsun: 'erg/s' } });
    expect(bound(opt, 'luminosity')).toMatchObject({ unit: 'erg/s', unitSource: 'option' });
    expect(bound(bindColumns(meta(['L_Lsun']), null, NO_OPTIONS), 'luminosity')).toMatchObject({ unit: 'solLum', unitSource: 'header' });
  });

  it('--bind beats UCD, which beats the name', () => {
    const m = meta(['lum', 'x'], { x: { ucd: 'phys.luminosity', unit: 'solLum' } });
    expect(bound(bindColumns(m, null, NO_OPTIONS), 'luminosity')).toMatchObject({ column: 'x', quantitySource: 'ucd' });
    const b = bindColumns(m, null, { bind: { lum: 'luminosity' }, units: { lum: 'solLum' } });
    expect(bound(b, 'luminosity')).toMatchObject({ column: 'lum', quantitySource: 'option', unitSource: 'option' });
  });

  it('writes one sentence of reason per column', () => {
    const b = bindColumns(meta(['L_Lsol', 'eL_Lsol']), null, NO_OPTIONS);
    expect(bound(b, 'luminosity').reason).toBe('`L_Lsol`: luminosity from the header name, unit solLum from the name suffix `_Lsol`');
    expect(bound(b, 'luminosity').errors).toEqual([{ role: 'sym', column: 'eL_Lsol', columnIndex: 1, unit: 'solLum', negativeStored: false }]);
  });

  it('--bind COLUMN=none sets a column aside', () => {
    const b = bindColumns(meta(['Lum', 'Lbol']), null, { bind: { Lbol: 'none' }, units: { Lum: 'solLum' } });
    expect(bound(b, 'luminosity').column).toBe('Lum');
    expect(b.columns).toHaveLength(1);
  });
});

describe('ambiguity is an error naming the columns and the option to choose', () => {
  it('two plain luminosity columns', () => {
    const e = bindingError(() => bindColumns(meta(['Lum', 'Lbol']), null, NO_OPTIONS));
    expect(e.column).toBe('Lum');
    expect(e.message).toContain('`Lum`');
    expect(e.message).toContain('`Lbol`');
    expect(e.message).toContain('--bind Lum=luminosity');
    expect(e.message).toContain('--bind Lbol=none');
  });

  it('a letter with a written unit is as sure as the word (`mass` vs `M_Msun`), and that ambiguity is reported first', () => {
    // `lum` cannot be settled without a mass to compare with; the mass ambiguity is the real error.
    const { meta: m, raw } = textBatch({ id: ['a'], mass: [1], M_Msun: [1], lum: [1] });
    const e = bindingError(() => bindColumns(m, raw, NO_OPTIONS));
    expect(e.message).toMatch(/^ambiguous binding: `mass` and `M_Msun` both look like mass/);
    const b = bindColumns(m, raw, { bind: { mass: 'none' }, units: {} });
    // One row is enough when it is the only comparable one: 1 L_sun at 1 M_sun fits Eker et al. 2018
    // (log L = -0.007) as linear, not as log.
    expect(bound(b, 'luminosity').unit).toBe('solLum');
  });

  it('two UCD columns without meta.main; meta.main settles it', () => {
    const m = meta(['a', 'b'], { a: { ucd: 'phys.mass', unit: 'solMass' }, b: { ucd: 'phys.mass', unit: 'solMass' } });
    expect(() => bindColumns(m, null, NO_OPTIONS)).toThrow(/`a` and `b` both look like mass/);
    m[1].ucd = 'phys.mass;meta.main';
    expect(bound(bindColumns(m, null, NO_OPTIONS), 'mass').column).toBe('b');
  });

  it('ids and stages pick by priority and never fail', () => {
    const b = bindColumns(meta(['pl_name', 'hostname', 'GaiaDR3_id', 'Class', 'SpT']), null, NO_OPTIONS);
    expect(bound(b, 'id').column).toBe('hostname');
    expect(bound(b, 'stage').column).toBe('SpT');
    const tie = bindColumns(meta(['SpT', '#SpT']), null, NO_OPTIONS);
    expect(bound(tie, 'stage').column).toBe('SpT');
    expect(tie.notes.join('\n')).toContain('`#SpT` could also be');
  });

  it('a decorated name loses to a plain one, with a note', () => {
    const b = bindColumns(meta(['S_RADIUS', 'S_RADIUS_EST']), null, { bind: {}, units: { S_RADIUS: 'solRad' } });
    expect(bound(b, 'radius').column).toBe('S_RADIUS');
    expect(b.notes.join('\n')).toMatch(/`S_RADIUS_EST` also looks like radius; `S_RADIUS` was bound \(a plain name outranks a decorated one\)/);
  });
});

describe('configuration errors name the column', () => {
  it('an unknown unit in the metadata', () => {
    const e = bindingError(() => bindColumns(meta(['lum'], { lum: { unit: 'furlong' } }), null, NO_OPTIONS));
    expect(e.column).toBe('lum');
    expect(e.message).toMatch(/column `lum`: unknown unit `furlong`/);
  });

  it('an unknown unit given with --unit, even for a column that stays unbound', () => {
    expect(bindingError(() => bindColumns(meta(['lum']), null, { bind: {}, units: { lum: 'Lsun/yr' } })).column).toBe('lum');
    expect(bindingError(() => bindColumns(meta(['flag']), null, { bind: {}, units: { flag: 'blorp' } })).message).toMatch(/unknown unit `blorp`/);
  });

  it('a unit of the wrong dimension', () => {
    const e = bindingError(() => bindColumns(meta(['lum'], { lum: { unit: 'K' } }), null, NO_OPTIONS));
    expect(e.message).toMatch(/`lum` is bound to luminosity, but its unit `K` .* is a temperature unit/);
  });

  it('options that name missing columns, unknown roles, or clash', () => {
    expect(bindingError(() => bindColumns(meta(['a']), null, { bind: { nope: 'mass' }, units: {} })).message).toMatch(/`nope`, which is not in the file/);
    expect(bindingError(() => bindColumns(meta(['a']), null, { bind: { a: 'weight' }, units: {} })).message).toMatch(/`weight` is not a role/);
    expect(bindingError(() => bindColumns(meta(['a', 'b']), null, { bind: { a: 'mass', b: 'mass' }, units: {} })).message).toMatch(/both `a` and `b`/);
    expect(bindingError(() => bindColumns(meta(['a']), null, { bind: { a: 'mass.err' }, units: {} })).message).toMatch(/no column is bound to mass/);
  });

  it('accepts uncertainty roles from --bind', () => {
    const b = bindColumns(meta(['m', 'up', 'down']), null, { bind: { m: 'mass', up: 'mass.errHi', down: 'mass.errLo' }, units: { m: 'solMass' } });
    expect(bound(b, 'mass').errors.map((e) => [e.role, e.column])).toEqual([
      ['hi', 'up'],
      ['lo', 'down'],
    ]);
  });
});

describe('units inferred from the sample, with a note', () => {
  it('a luminosity column of 3.9e26-ish values is in watts', () => {
    const { meta: m, raw } = textBatch({ lum: [3.9e26, 7.7e26, 1.5e27, 2.1e26] });
    const b = bindColumns(m, raw, NO_OPTIONS);
    expect(bound(b, 'luminosity')).toMatchObject({ unit: 'W', unitSource: 'inferred' });
    expect(b.notes.join('\n')).toMatch(/`lum`: no unit declared; W inferred from the values: median .* matches watts/);
  });

  it('3.9e33-ish values are erg/s', () => {
    const { meta: m, raw } = textBatch({ lum: [3.9e33, 7.7e33, 1.5e34] });
    expect(bound(bindColumns(m, raw, NO_OPTIONS), 'luminosity').unit).toBe('erg/s');
  });

  it('negative values mean log', () => {
    const { meta: m, raw } = textBatch({ lum: [-1.2, 0.3, -2.5, 1.1, -0.4] });
    const b = bindColumns(m, raw, NO_OPTIONS);
    expect(bound(b, 'luminosity')).toMatchObject({ unit: 'log(solLum)', unitSource: 'inferred' });
    expect(b.notes.join('\n')).toMatch(/3 negative values, impossible for a linear luminosity/);
  });

  it('a lone -99 fill value does not make a column log', () => {
    const { meta: m, raw } = textBatch({ M: [1.0, 0.8, -99, 1.2, 0.5, 2.0] });
    expect(bound(bindColumns(m, raw, NO_OPTIONS), 'mass').unit).toBe('solMass');
  });

  it('compares linear and log against Stefan-Boltzmann from R and Teff', () => {
    // All brighter than the Sun, so log L is positive and only the comparison can tell.
    const r = [2, 3, 1.5, 4, 2.5];
    const t = [6500, 7000, 6000, 8000, 5800];
    const lin = textBatch({ R: r, Teff: t, L: r.map((x, i) => sb(x, t[i])) });
    expect(bound(bindColumns(lin.meta, lin.raw, NO_OPTIONS), 'luminosity').unit).toBe('solLum');
    const log = textBatch({ R: r, Teff: t, L: r.map((x, i) => Math.log10(sb(x, t[i]))) });
    const b = bindColumns(log.meta, log.raw, NO_OPTIONS);
    expect(bound(b, 'luminosity').unit).toBe('log(solLum)');
    expect(b.notes.join('\n')).toMatch(/agree with Stefan-Boltzmann from `R` and `Teff`/);
  });

  it('falls back on Eker et al. 2018 from the mass when there is no radius', () => {
    // log L = 4.329 log M + 0.010 for 1.05 < M <= 2.4 (Eker et al. 2018, Table 4).
    const m = [1.2, 1.5, 2.0, 1.1, 1.8];
    const { meta: mm, raw } = textBatch({ M: m, L: m.map((x) => 10 ** (4.329 * Math.log10(x) + 0.01)) });
    const b = bindColumns(mm, raw, NO_OPTIONS);
    expect(bound(b, 'luminosity').unit).toBe('solLum');
    expect(b.notes.join('\n')).toMatch(/Eker et al. 2018 from `M`/);
  });

  it('refuses to guess between linear and log when nothing settles it', () => {
    const { meta: m, raw } = textBatch({ lum: [0.5, 1.2, 2.0, 3.1] });
    const e = bindingError(() => bindColumns(m, raw, NO_OPTIONS));
    expect(e.column).toBe('lum');
    expect(e.message).toMatch(/cannot tell .* linear or log/);
    expect(e.message).toContain('--unit lum=solLum');
  });

  it('Teff of 3.3-4.8 is log Teff; mass and radius in SI are recognised', () => {
    const { meta: m, raw } = textBatch({
      Teff: [3.76, 3.6, 3.9, 4.1],
      mass: [1.989e30, 2.5e30, 1.2e30, 3e30],
      radius: [6.957e5, 5e5, 9e5, 1.2e6],
    });
    const b = bindColumns(m, raw, NO_OPTIONS);
    expect(bound(b, 'teff').unit).toBe('log(K)');
    expect(bound(b, 'mass').unit).toBe('kg');
    expect(bound(b, 'radius').unit).toBe('km');
  });

  it('logg above 100 is a linear g in cgs', () => {
    const { meta: m, raw } = textBatch({ logg: [27400, 30000, 12000] });
    expect(bound(bindColumns(m, raw, NO_OPTIONS), 'logg')).toMatchObject({ unit: 'cm.s-2', unitSource: 'inferred' });
  });

  it('with no sample, assumes the canonical unit and says so', () => {
    const b = bindColumns(meta(['st_mass']), null, NO_OPTIONS);
    expect(bound(b, 'mass')).toMatchObject({ unit: 'solMass', unitSource: 'none' });
    expect(b.notes.join('\n')).toMatch(/`st_mass`: no unit declared and there is no sample to check; assumed solMass/);
  });
});

describe('one quantity written twice, log and linear', () => {
  const logL = [2.243, -0.31, 0.5, 1.2, -1.5];
  it('binds the one with uncertainties when the values agree (PHL S_LOG_LUM / S_LUMINOSITY)', () => {
    const { meta: m, raw } = textBatch({
      S_LOG_LUM: logL,
      S_LOG_LUM_ERROR_MIN: logL.map(() => -0.05),
      S_LOG_LUM_ERROR_MAX: logL.map(() => 0.07),
      S_LUMINOSITY: logL.map((x) => 10 ** x),
      S_RADIUS: [19, 0.9, 1.5, 2.0, 0.3],
      S_TEMPERATURE: [4742, 5300, 6000, 6900, 3500],
    });
    const b = bindColumns(m, raw, NO_OPTIONS);
    expect(bound(b, 'luminosity').column).toBe('S_LOG_LUM');
    expect(b.notes.join('\n')).toMatch(/`S_LUMINOSITY` repeats `S_LOG_LUM`/);
  });

  it('binds the linear one when neither has uncertainties (RSG R* beside log(R/R.))', () => {
    const r = [355, 800, 1200, 24];
    const { meta: m, raw } = textBatch({ 'log(R/R.)': r.map(Math.log10), 'R*': r });
    expect(bound(bindColumns(m, raw, NO_OPTIONS), 'radius').column).toBe('R*');
  });

  it('stays ambiguous when the two disagree', () => {
    const { meta: m, raw } = textBatch({ 'log(R/R.)': [1, 2, 3, 2.5], 'R*': [5, 5, 5, 5] });
    expect(() => bindColumns(m, raw, NO_OPTIONS)).toThrow(BindingError);
  });
});

describe('uncertainties', () => {
  it('attaches a UCD uncertainty to the value column before it (VizieR order)', () => {
    const m: ColumnMeta[] = meta(['logL', 'err'], {
      logL: { ucd: 'phys.luminosity', unit: '[Lsun]' },
      err: { ucd: 'stat.error;phys.luminosity', unit: '[Lsun]' },
    });
    const b = bindColumns(m, null, NO_OPTIONS);
    expect(bound(b, 'luminosity')).toMatchObject({ unit: 'log(solLum)', unitSource: 'metadata' });
    expect(bound(b, 'luminosity').errors).toEqual([{ role: 'sym', column: 'err', columnIndex: 1, unit: 'dex', negativeStored: false }]);
  });

  it('detects a lower error stored negative from the sample when the name does not say so', () => {
    const { meta: m, raw } = textBatch({ mass: [1, 2, 1.5], mass_lo: [-0.1, -0.2, -0.1], mass_hi: [0.1, 0.3, 0.2] });
    const errs = bound(bindColumns(m, raw, NO_OPTIONS), 'mass').errors;
    expect(errs.find((e) => e.role === 'lo')!.negativeStored).toBe(true);
  });

  it('sets aside `_lo`/`_hi` columns that are bounds around the value, with a note', () => {
    const d = [100, 250, 1000, 40, 75];
    const { meta: m, raw } = textBatch({ dist: d, dist_lo: d.map((x) => x * 0.9), dist_hi: d.map((x) => x * 1.1) });
    const b = bindColumns(m, raw, NO_OPTIONS);
    expect(bound(b, 'distance').errors).toEqual([]);
    expect(b.notes.join('\n')).toMatch(/look like bounds around `dist`/);
  });

  it('takes the name over a metadata unit that forgets the log (`log_L` labelled `Lsun`)', () => {
    const b = bindColumns(meta(['log_L'], { log_L: { unit: 'Lsun' } }), null, NO_OPTIONS);
    expect(bound(b, 'luminosity').unit).toBe('log(solLum)');
    expect(b.notes.join('\n')).toMatch(/the metadata says `Lsun` but the name marks a log value/);
  });
});

// The real catalogs in ../shared/reference-data (see each PROVENANCE.md).
describe('real catalogs', () => {
  const cases: [string, (b: Binding) => void][] = [
    [
      'carmenes-mdwarfs/cif03.full_table.csv',
      (b) => {
        expect(bound(b, 'mass')).toMatchObject({ column: 'M_Msol', unit: 'solMass', unitSource: 'header' });
        expect(bound(b, 'luminosity')).toMatchObject({ column: 'L_Lsol', unit: 'solLum' });
        expect(bound(b, 'luminosity').errors[0].column).toBe('eL_Lsol');
        expect(bound(b, 'teff')).toMatchObject({ column: 'Teff_K', unit: 'K' });
        expect(bound(b, 'id').column).toBe('Name');
        expect(bound(b, 'stage').column).toBe('SpT');
      },
    ],
    [
      'nasa-exoplanet-archive/PSCompPars_2024-10-15.csv',
      (b) => {
        const mass = bound(b, 'mass');
        expect(mass).toMatchObject({ column: 'st_mass', unit: 'solMass' });
        expect(mass.errors).toEqual([
          { role: 'lo', column: 'st_masserr2', columnIndex: expect.any(Number), unit: 'solMass', negativeStored: true },
          { role: 'hi', column: 'st_masserr1', columnIndex: expect.any(Number), unit: 'solMass', negativeStored: false },
        ]);
        expect(bound(b, 'logg').unit).toBe('log(cm.s-2)');
        expect(bound(b, 'id').column).toBe('hostname');
        expect(b.columns.some((c) => c.column.startsWith('pl_'))).toBe(false);
      },
    ],
    [
      'phl-exoplanet-catalog/phl_exoplanet_catalog.csv',
      (b) => {
        expect(bound(b, 'luminosity')).toMatchObject({ column: 'S_LOG_LUM', unit: 'log(solLum)' });
        expect(bound(b, 'luminosity').errors.map((e) => [e.role, e.column, e.unit, e.negativeStored])).toEqual([
          ['lo', 'S_LOG_LUM_ERROR_MIN', 'dex', true],
          ['hi', 'S_LOG_LUM_ERROR_MAX', 'dex', false],
        ]);
        expect(bound(b, 'radius').column).toBe('S_RADIUS');
        expect(bound(b, 'id').column).toBe('S_NAME');
      },
    ],
    [
      'wild-mixed-units/exoplanet_data_tmp.csv',
      (b) => {
        // 3290 rows hold st_mass**3.5 (linear), about 2300 the archive's log10 (PROVENANCE.md).
        expect(bound(b, 'luminosity')).toMatchObject({ column: 'st_lum', unitSource: 'inferred' });
        expect(b.notes.join('\n')).toMatch(/`st_lum` looks mixed: \d+ sample rows agree with Stefan-Boltzmann from `st_rad` and `st_teff` as log\(solLum\) and \d+ as solLum/);
      },
    ],
    [
      'nasa-exoplanet-archive/legacy_hz_confirmed_planet_hosts_2019.csv',
      (b) => {
        // The 2019 table stores st_lum linear (PROVENANCE.md: 11 Com 174.98, not 2.243).
        expect(bound(b, 'luminosity')).toMatchObject({ column: 'st_lum', unit: 'solLum', unitSource: 'inferred' });
      },
    ],
    [
      'mwdd-white-dwarfs/MWDD-export.csv',
      (b) => {
        expect(bound(b, 'teff')).toMatchObject({ column: 'teff', unit: 'K' });
        expect(bound(b, 'logg')).toMatchObject({ column: 'logg', unit: 'log(cm.s-2)' });
        expect(bound(b, 'distance')).toMatchObject({ column: 'Dpc', unit: 'pc', unitSource: 'header' });
        expect(bound(b, 'id').column).toBe('wdid');
      },
    ],
    [
      'massive-luminous-stars/RSG_catalog_4_11_24.csv',
      (b) => {
        expect(bound(b, 'luminosity')).toMatchObject({ column: 'log(L/L.)', unit: 'log(solLum)', unitSource: 'header' });
        expect(bound(b, 'radius')).toMatchObject({ column: 'R*', unit: 'solRad' });
        expect(bound(b, 'teff')).toMatchObject({ column: 'Teff', unit: 'K' });
        expect(bound(b, 'luminosity').reason).toContain('(`L.` read as L_sun)');
        expect(b.columns.some((c) => c.quantity === 'mass')).toBe(false);
      },
    ],
  ];
  for (const [rel, check] of cases) {
    const { present, label } = needs(rel);
    it.skipIf(!present)(`${rel}${label}`, () => {
      const { meta: m, raw } = readReference(rel);
      check(bindColumns(m, raw, NO_OPTIONS));
    });
  }

  const schweitzer = needs('carmenes-mdwarfs/schweitzer19.csv');
  it.skipIf(!schweitzer.present)(`schweitzer19.csv: Lum and Lbol are two estimates, so the binding asks${schweitzer.label}`, () => {
    const { meta: m, raw } = readReference('carmenes-mdwarfs/schweitzer19.csv');
    const e = bindingError(() => bindColumns(m, raw, NO_OPTIONS));
    expect(e.message).toMatch(/`Lbol` and `Lum` both look like luminosity/);
    const b = bindColumns(m, raw, { bind: { Lbol: 'luminosity', Lum: 'none', MassMR: 'mass' }, units: {} });
    expect(bound(b, 'luminosity').errors[0].column).toBe('Lberr');
  });
});

describe('bad input gives a BindingError or a binding, never another exception', () => {
  const odd = ['constructor', '__proto__', 'toString', 'hasOwnProperty', 'log constructor', 'e_constructor', '', ' ', '[', '(', 'log(', 'L/', '/L', '***', 'e_', 'E_', '_err', 'err1', '%', 'log()', '[]', 'mass [', 'lum (W', 'Teff)', 'ＬＳＵＮ', 'L☉', 'x'.repeat(5000)];

  it('odd headers, with and without sample values', () => {
    const { meta: m, raw } = textBatch(Object.fromEntries(odd.map((h, i) => [h || `blank${i}`, ['1', 'x', '', '-3']])));
    for (const sample of [raw, null]) {
      try {
        bindColumns(m, sample, NO_OPTIONS);
      } catch (e) {
        expect(e).toBeInstanceOf(BindingError);
      }
    }
  });

  it('options keyed by prototype names are plain column names', () => {
    const b = bindColumns(meta(['constructor', 'toString']), null, { bind: { constructor: 'teff' }, units: { constructor: 'K' } });
    expect(bound(b, 'teff')).toMatchObject({ column: 'constructor', unit: 'K', unitSource: 'option' });
    expect(() => bindColumns(meta(['m']), null, { bind: { m: 'mass.constructor' }, units: {} })).toThrow(BindingError);
  });

  for (const rel of [
    'carmenes-mdwarfs/mann15.stars.csv',
    'life-nearby-stars/LIFE-StarCat4_dec2024.csv',
    'life-nearby-stars/Mamajek2022-04-16.csv',
  ]) {
    const { present, label } = needs(rel);
    it.skipIf(!present)(`${rel} binds${label}`, () => {
      const { meta: m, raw } = readReference(rel);
      expect(bindColumns(m, raw, NO_OPTIONS).columns.length).toBeGreaterThan(2);
    });
  }
});
