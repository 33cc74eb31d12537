import { describe, expect, it } from 'vitest';
import { duplicateId } from '../../../rules/checks/duplicate-id.js';
import { Fingerprint, FingerprintSet, SET_FULL } from '../../../rules/checks/shared/fingerprints.js';
import { makeBatch, runRules } from '../../helpers/batch.js';

/** Rows that differ only in their id; the mass (1 M_sun, IAU 2015 B3) is there to make a row. */
const ids = (id: string[], firstRow = 1) => makeBatch({ mass: { values: id.map(() => 1) } }, { id }, firstRow);

describe('duplicate-id', () => {
  it('fires on a repeated id, naming the first row (CARMENES: LP 377-78 B and GJ 1166 B share a Gaia id)', () => {
    // CARMENES PROVENANCE.md: GaiaDR3_id 3954959680345736192 is on two rows.
    const { findings } = runRules([duplicateId], [ids(['4015371320237436800', '3954959680345736192', '1', '3954959680345736192'])]);
    const rows = findings.filter((f) => f.scope === 'row');
    expect(rows.map((f) => [f.row, f.severity, f.values.firstRow])).toEqual([[4, 'warning', 2]]);
    const note = findings.find((f) => f.scope === 'column')!;
    expect(note.severity).toBe('note');
    expect(note.message).toMatch(/1 of 4 rows repeats an id.*each repeated row is listed/);
  });

  it('stays silent on 19-digit ids that differ only beyond double precision', () => {
    // IEEE 754 binary64 spaces integers near 4e18 by 512, so these collapse as numbers (the CARMENES
    // PROVENANCE note: 33 false duplicates as doubles); as text they are distinct.
    expect(Number('3954959680345736192')).toBe(Number('3954959680345736193'));
    const { findings, reports } = runRules([duplicateId], [ids(['3954959680345736192', '3954959680345736193', '3954959680345736448'])]);
    expect(findings).toEqual([]);
    expect(reports[0].checked).toBe(3);
  });

  it('edge: a table with several rows per star gets one note with the counts and no row listing', () => {
    // PHL repeats each host once per planet: 1313 of 5220 rows (PROVENANCE). Here 30 hosts with
    // 3 planets each; rows missing an id are skipped with a reason.
    const id: (string | null)[] = [];
    for (let h = 0; h < 30; h++) id.push(`Kepler-${h}`, `Kepler-${h}`, `Kepler-${h}`);
    id.push(null);
    const { findings, reports } = runRules([duplicateId], [ids(id as string[])]);
    expect(findings).toHaveLength(1);
    expect(findings[0].values).toMatchObject({ rowsCompared: 90, rowsRepeating: 60, keysOnSeveralRows: 30, mostRowsForOneKey: 3 });
    expect(findings[0].message).toMatch(/several rows per star/);
    expect(reports[0].skipped).toEqual({ 'id missing': 1 });
  });

  it('edge: white space inside an id is normalised, letter case is kept; batches share the state', () => {
    const { findings } = runRules([duplicateId], [ids(['BD+20 2457', 'bd+20 2457'], 1), ids(['BD+20  2457 '], 3)]);
    expect(findings.filter((f) => f.scope === 'row').map((f) => [f.row, f.values.firstRow])).toEqual([[3, 1]]);
  });
});

describe('FingerprintSet', () => {
  it('keeps first rows and counts through growth, and stops at its cap', () => {
    const set = new FingerprintSet(5000, 16);
    const fp = new Fingerprint();
    for (let i = 0; i < 4000; i++) set.add(fp.reset().text(`star ${i}`).done().hi, fp.lo, i + 1);
    expect(set.size).toBe(4000);
    const e = set.add(fp.reset().text('star 1234').done().hi, fp.lo, 9999);
    expect(set.added).toBe(false);
    expect([set.firstRow[e], set.count[e]]).toEqual([1235, 2]);
    const small = new FingerprintSet(1);
    small.add(1, 2, 1);
    expect(small.add(3, 4, 2)).toBe(SET_FULL);
    expect(small.add(1, 2, 3)).toBe(0);
  });

  it('fingerprints tell fields apart and read every NaN alike', () => {
    const fp = new Fingerprint();
    const key = (f: (x: Fingerprint) => Fingerprint) => {
      f(fp.reset()).done();
      return `${fp.hi}:${fp.lo}`;
    };
    expect(key((x) => x.text('ab').text('c'))).not.toBe(key((x) => x.text('a').text('bc')));
    expect(key((x) => x.number(NaN))).toBe(key((x) => x.number(Number('x'))));
    expect(key((x) => x.number(0))).toBe(key((x) => x.number(-0)));
    expect(key((x) => x.text(null))).not.toBe(key((x) => x.text('')));
  });
});
