import { describe, expect, it } from 'vitest';
import { bindColumns, toBatch } from '../../../cli/binding/bind.js';
import { parseCell } from '../../../cli/binding/cells.js';
import type { BindOptions } from '../../../cli/binding/types.js';
import type { RawBatch } from '../../../cli/readers/types.js';
import { meta, needs, readReference, textBatch } from './fixtures.js';

function batchOf(columns: Record<string, (string | number | null)[]>, options: BindOptions = { bind: {}, units: {} }) {
  const { meta: m, raw } = textBatch(columns);
  const binding = bindColumns(m, raw, options);
  return toBatch(raw, binding, 3);
}

const arr = (a: Float64Array | null | undefined) => Array.from(a ?? []);

describe('toBatch: units to canonical', () => {
  it('W to L_sun: 3.828e26 W is 1 L_sun (IAU 2015 Resolution B3 nominal L_sun)', () => {
    const b = batchOf({ lum: ['3.828e26', '7.656e26', '3.828e25'] }, { bind: {}, units: { lum: 'W' } });
    const L = b.quantities.luminosity!;
    expect(arr(L.value)).toEqual([1, 2, 0.1].map((x) => expect.closeTo(x, 12)));
    expect(arr(L.log)).toEqual([0, Math.log10(2), -1].map((x) => expect.closeTo(x, 12)));
    expect(arr(L.raw)).toEqual([3.828e26, 7.656e26, 3.828e25]);
    expect(L.unit).toBe('W');
  });

  it('erg/s to L_sun: 3.828e33 erg/s is 1 L_sun (IAU 2015 B3; 1 erg = 1e-7 J)', () => {
    const b = batchOf({ lum: ['3.828e33'] }, { bind: {}, units: { lum: 'erg/s' } });
    expect(b.quantities.luminosity!.value[0]).toBeCloseTo(1, 12);
  });

  it('log L to linear, keeping log alongside', () => {
    const b = batchOf({ logL: ['1.5', '-2', '0'] });
    const L = b.quantities.luminosity!;
    expect(L.unit).toBe('log(solLum)');
    expect(arr(L.value)).toEqual([10 ** 1.5, 0.01, 1].map((x) => expect.closeTo(x, 12)));
    expect(arr(L.log)).toEqual([1.5, -2, 0]);
    expect(arr(L.raw)).toEqual([1.5, -2, 0]);
  });

  it('log Teff to K, and linear g in m s^-2 to log g in cgs (a factor 100, physics-reference.md §9)', () => {
    const b = batchOf({ log_Teff: ['3.7612'], g: ['274'] }, { bind: { g: 'logg' }, units: { g: 'm.s-2' } });
    expect(b.quantities.teff!.value[0]).toBeCloseTo(10 ** 3.7612, 9);
    expect(b.quantities.logg!.value[0]).toBeCloseTo(Math.log10(27400), 12);
  });

  it('radius in km to R_sun: 695 700 km is 1 R_sun (IAU 2015 B3)', () => {
    const b = batchOf({ R: ['695700'] }, { bind: {}, units: { R: 'km' } });
    expect(b.quantities.radius!.value[0]).toBeCloseTo(1, 12);
  });
});

describe('toBatch: uncertainties', () => {
  it('NASA err1/err2: asymmetric, with err2 stored negative, as positive magnitudes', () => {
    const b = batchOf({ st_mass: ['1.00', '0.50'], st_masserr1: ['0.10', '0.02'], st_masserr2: ['-0.05', '-0.03'] });
    const M = b.quantities.mass!;
    expect(arr(M.errLo)).toEqual([0.05, 0.03]);
    expect(arr(M.errHi)).toEqual([0.1, 0.02]);
    expect(M.errColumns).toEqual(['st_masserr2', 'st_masserr1']);
  });

  it('dex errors of a log L stay in dex and become asymmetric in linear space (PHL _ERROR_MIN/_MAX)', () => {
    const b = batchOf({ S_LOG_LUM: ['2.0'], S_LOG_LUM_ERROR_MIN: ['-0.1'], S_LOG_LUM_ERROR_MAX: ['0.2'] });
    const L = b.quantities.luminosity!;
    expect(L.logErrLo![0]).toBeCloseTo(0.1, 12);
    expect(L.logErrHi![0]).toBeCloseTo(0.2, 12);
    expect(L.errLo![0]).toBeCloseTo(100 * (1 - 10 ** -0.1), 9);
    expect(L.errHi![0]).toBeCloseTo(100 * (10 ** 0.2 - 1), 9);
  });

  it('a linear symmetric L error gets its log errors from the value', () => {
    const b = batchOf({ L_Lsun: ['2', '0.4'], e_L_Lsun: ['0.5', '0.5'] });
    const L = b.quantities.luminosity!;
    expect(arr(L.errLo)).toEqual([0.5, 0.5]);
    expect(L.logErrLo![0]).toBeCloseTo(Math.log10(2) - Math.log10(1.5), 12);
    expect(L.logErrHi![0]).toBeCloseTo(Math.log10(2.5) - Math.log10(2), 12);
    // A lower error as large as the value leaves log L unbounded below.
    expect(L.logErrLo![1]).toBe(Infinity);
  });

  it('no uncertainty column gives null errors', () => {
    const T = batchOf({ Teff_K: ['5772'] }).quantities.teff!;
    expect(T.errLo).toBeNull();
    expect(T.errHi).toBeNull();
    expect(T.errColumns).toEqual([]);
  });
});

describe('toBatch: cells', () => {
  it('reads decimals, exponents, a leading +, inf; treats missing markers as missing without a problem', () => {
    const cells = ['1.5', '+2', '1e3', '-4.5E-2', ' 7 ', 'inf', '-inf', '', 'NaN', 'nan', 'null', 'None', '--', null];
    const b = batchOf({ Teff_K: cells });
    expect(arr(b.quantities.teff!.raw)).toEqual([1.5, 2, 1000, -0.045, 7, Infinity, -Infinity, NaN, NaN, NaN, NaN, NaN, NaN, NaN]);
    expect(b.problems).toEqual([]);
  });

  it('anything else is NaN plus one problem naming the column and the text (runs of dots are sentinels)', () => {
    const b = batchOf({ Teff_K: ['5772', 'abc', '1,5', '0x10', '...'] });
    expect(arr(b.quantities.teff!.value).slice(1).every((x) => Number.isNaN(x))).toBe(true);
    expect(b.problems.map((p) => [p.index, p.kind, p.column, p.text])).toEqual([
      [1, 'unparseable', 'Teff_K', 'abc'],
      [2, 'unparseable', 'Teff_K', '1,5'],
      [3, 'unparseable', 'Teff_K', '0x10'],
      [4, 'sentinel', 'Teff_K', '...'],
    ]);
    expect(b.problems[1].message).toBe('Teff_K: `1,5` is not a number');
  });

  it('parseCell refuses the non-decimal forms Number() would accept', () => {
    for (const s of ['0x1A', '0b101', '0o17', ' 0x1A', '   ']) expect(Number.isNaN(parseCell(s)), s).toBe(true);
    expect(parseCell('0.5')).toBe(0.5);
    expect(parseCell('0')).toBe(0);
  });

  it('text quantities come through as trimmed strings, with empty cells as null', () => {
    const b = batchOf({ Name: ['  GJ 1 ', '', 'Wolf 359'], SpType: ['   dK7', 'M5.5 V', 'None'], Teff_K: ['4000', '3000', '2800'] });
    expect(b.text.id).toEqual({ column: 'Name', values: ['GJ 1', null, 'Wolf 359'] });
    expect(b.text.stage!.values).toEqual(['dK7', 'M5.5 V', null]);
  });
});

describe('toBatch: the batch around the values', () => {
  it('copies lines, input and first row, turns malformed records into problems, starts unusable empty', () => {
    const { meta: m, raw } = textBatch({ Teff_K: ['5000', '6000'] });
    const withLines: RawBatch = {
      ...raw,
      firstRow: 41,
      lines: Int32Array.from([50, 51]),
      malformed: [
        { index: 1, line: 51, message: 'row has 3 fields, the header 1' },
        { index: -1, line: 49, message: 'unterminated quote' },
      ],
    };
    const b = toBatch(withLines, bindColumns(m, withLines, { bind: {}, units: {} }), 7);
    expect(b.input).toBe(7);
    expect(b.firstRow).toBe(41);
    expect(b.length).toBe(2);
    expect(Array.from(b.lines!)).toEqual([50, 51]);
    expect(b.unusable).toEqual({});
    expect(b.problems).toEqual([
      { index: -1, kind: 'malformed', column: null, text: '', message: 'line 49: unterminated quote', line: 49 },
      { index: 1, kind: 'malformed', column: null, text: '', message: 'row has 3 fields, the header 1', line: 51 },
    ]);
  });

  it('reads binary number columns with a nulls mask', () => {
    const m = meta(['Teff', 'star_id'], { Teff: { type: 'float', unit: 'K' }, star_id: { type: 'integer' } });
    const raw: RawBatch = {
      length: 3,
      firstRow: 1,
      lines: null,
      columns: [
        { kind: 'number', values: Float64Array.from([5772, NaN, 3000]), nulls: Uint8Array.from([0, 1, 0]) },
        { kind: 'number', values: Float64Array.from([1, 2, NaN]), nulls: Uint8Array.from([0, 0, 1]) },
      ],
      malformed: [],
    };
    const b = toBatch(raw, bindColumns(m, raw, { bind: {}, units: {} }), 0);
    expect(arr(b.quantities.teff!.value)).toEqual([5772, NaN, 3000]);
    expect(b.text.id!.values).toEqual(['1', '2', null]);
    expect(b.problems).toEqual([]);
  });
});

describe('toBatch on a real catalog', () => {
  const rel = 'phl-exoplanet-catalog/phl_exoplanet_catalog.csv';
  const { present, label } = needs(rel);
  it.skipIf(!present)(`PHL: 11 Com has log L 2.243 (-0.085/+0.071 dex), as PROVENANCE.md quotes${label}`, () => {
    const { meta: m, raw } = readReference(rel);
    const binding = bindColumns(m, raw, { bind: {}, units: {} });
    const b = toBatch(raw, binding, 0);
    const i = b.text.id!.values.indexOf('11 Com');
    const L = b.quantities.luminosity!;
    expect(L.log![i]).toBeCloseTo(2.243, 9);
    expect(L.logErrLo![i]).toBeCloseTo(0.085, 9);
    expect(L.logErrHi![i]).toBeCloseTo(0.071, 9);
    expect(L.value[i]).toBeCloseTo(10 ** 2.243, 6);
    expect(b.problems).toEqual([]);
  });
});
