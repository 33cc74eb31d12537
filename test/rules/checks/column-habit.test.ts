/**
 * The unit screens learn a column's habit from the input's first 16384 rows (RunContext.sample),
 * not from the rows before each row: a row that a slipped decimal point would explain as well as a
 * log value is read in the column's habit wherever it stands, and the verdict is the same whatever
 * the batch size. The catalog below is made up: twenty rows whose L column (declared solLum) holds
 * L/10 or log L alike well, then forty rows that are clearly log L (negative or too small for
 * their R and Teff), then four hundred plain rows. The luminosities follow from
 * L = R^2 (Teff / 5772 K)^4 in solar units (IAU 2015 Resolution B3 nominal Teff_sun).
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { tempDir } from '../../helpers/cli.js';
import { checkPath } from '../../robustness/pipeline.js';

const lum = (r: number, t: number) => r * r * (t / 5772) ** 4;

function habitCatalog(): string {
  const rows = ['id,mass,radius,teff,lum'];
  for (let k = 0; k < 20; k++) {
    const r = 1.8 + 0.01 * k;
    rows.push(`C${k},1.3,${r.toFixed(2)},6600,${(lum(r, 6600) / 10).toFixed(3)}`);
  }
  for (let k = 0; k < 40; k++) {
    const r = 0.9 + 0.01 * k;
    const t = 5600 + 10 * k;
    rows.push(`P${k},1.0,${r.toFixed(2)},${t},${Math.log10(lum(r, t)).toFixed(3)}`);
  }
  for (let k = 0; k < 400; k++) {
    const r = 0.7 + 0.002 * k;
    const t = 5000 + 3 * k;
    rows.push(`N${k},1.0,${r.toFixed(3)},${t},${lum(r, t).toFixed(4)}`);
  }
  return rows.join('\n') + '\n';
}

describe('a column habit learned from the first rows of the input', () => {
  it('reads the rows before the habit shows in it too, and the same in any batch size', async () => {
    const path = join(tempDir(), 'habit.csv');
    writeFileSync(path, habitCatalog());
    const bind = { bind: {}, units: { lum: 'solLum' } };
    const whole = await checkPath(path, {}, bind);
    const unit = whole.findings.filter((f) => f.rule === 'luminosity-unit-mixup' && f.row !== null);
    // The first twenty rows come before any log L row, yet the habit (log L, from the sample) covers them.
    expect(unit.filter((f) => f.row! <= 20).length).toBe(20);
    expect(unit.every((f) => f.row! <= 60)).toBe(true);
    // Cells the screen explains are withheld from the judging rules.
    expect(whole.findings.some((f) => f.rule === 'stefan-boltzmann-mismatch' && f.row! <= 20)).toBe(false);
    for (const batchSize of [1, 7, 33]) {
      const small = await checkPath(path, { batchSize }, bind);
      expect(small.findings).toEqual(whole.findings);
    }
  });
});
