import { describe, expect, it } from 'vitest';
import { bindColumns } from '../../../cli/binding/bind.js';
import { explainBinding } from '../../../cli/binding/explain.js';
import { meta, textBatch } from './fixtures.js';

describe('explainBinding', () => {
  const { meta: m, raw } = textBatch({
    Name: ['GJ 1', 'GJ 2'],
    L_Lsol: ['0.1', '0.02'],
    eL_Lsol: ['0.01', '0.002'],
    st_mass: ['0.5', '0.3'],
    st_masserr1: ['0.02', '0.01'],
    st_masserr2: ['-0.02', '-0.01'],
    ra: ['10.1', '20.2'],
    flag: ['a', 'b'],
  });
  const text = explainBinding(bindColumns(m, raw, { bind: {}, units: {} }), m);
  const lines = text.split('\n');

  it('prints one aligned line per bound quantity with its source and reason', () => {
    const lum = lines.find((l) => l.trimStart().startsWith('luminosity'))!;
    expect(lum).toMatch(/^ {2}luminosity +L_Lsol +solLum +name \/ header +luminosity from the header name, unit solLum from the name suffix `_Lsol`$/);
    const head = lines[0];
    const mass = lines.find((l) => l.trimStart().startsWith('mass'))!;
    // Columns line up under the header.
    for (const word of ['column', 'unit', 'from']) {
      const at = head.indexOf(word);
      expect(lum[at - 1]).toBe(' ');
      expect(mass[at - 1]).toBe(' ');
      expect(lum[at]).not.toBe(' ');
    }
  });

  it('lists uncertainty columns under their value', () => {
    const i = lines.findIndex((l) => l.trimStart().startsWith('mass'));
    expect(lines[i + 1]).toMatch(/st_masserr2 +solMass +lower uncertainty, stored negative/);
    expect(lines[i + 2]).toMatch(/st_masserr1 +solMass +upper uncertainty/);
  });

  it('then the unbound columns briefly, then the notes', () => {
    expect(text).toContain('Not bound (2): ra, flag');
    const notes = lines.indexOf('Notes:');
    expect(notes).toBeGreaterThan(lines.findIndex((l) => l.startsWith('Not bound')));
    expect(lines[notes + 1]).toMatch(/^ {2}- `st_mass`: no unit declared; solMass inferred/);
  });

  it('is plain text', () => {
    expect(text).not.toMatch(/\u001b\[/);
  });

  it('says so when nothing is bound', () => {
    expect(explainBinding(bindColumns(meta(['x', 'y']), null, { bind: {}, units: {} }), meta(['x', 'y']))).toMatch(/^No column was bound/);
  });
});
