/**
 * One input checked in row ranges (threads and shards of one file) must give the findings and the
 * accounting of one pass: every rule's state is saved per range, sent through the v8 serializer,
 * and absorbed in order by the run that finishes the input. The inputs are the bundled sample
 * catalog (planted errors of every kind) and real catalogs from ../shared/reference-data, read
 * through the command line's readers and binder in small batches.
 */
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ALL_RULES } from '../../../rules/checks/index.js';
import type { Batch, Finding } from '../../../rules/engine/types.js';
import type { RuleSelection } from '../../../rules/engine/runner.js';
import { toBatch } from '../../../cli/binding/to-batch.js';
import { bindFromFirstBatch } from '../../../cli/commands/input-steps.js';
import { openCatalog } from '../../../cli/readers/open.js';
import { REFERENCE, SKIP_SHARED, hasShared } from '../../helpers/cli.js';
import { boundOf, runInRanges, runWhole } from '../../helpers/ranges.js';

const ROOT = join(import.meta.dirname, '../../..');

async function batchesOf(path: string, batchSize = 400): Promise<{ batches: Batch[]; sample: Batch | undefined }> {
  const reader = await openCatalog(path, { batchSize });
  try {
    const { it, ahead, binding, sample } = await bindFromFirstBatch(reader, { bind: {}, units: {} });
    const out = ahead.map((raw) => toBatch(raw, binding, 0));
    for (let r = await it.next(); !r.done; r = await it.next()) out.push(toBatch(r.value, binding, 0));
    return { batches: out, sample: sample ? toBatch(sample, binding, 0) : undefined };
  } finally {
    await reader.close();
  }
}

/** Range starts for n rows: one cut in the middle; a lone first and last row; seven uneven ranges. */
function cutsFor(n: number): number[][] {
  const even = Array.from({ length: 6 }, (_, k) => Math.floor(((k + 1) * n) / 7) + 3 * k + 1).filter((r) => r > 1 && r <= n);
  return [[Math.floor(n / 2) + 1], [2, n].filter((r) => r <= n), [...new Set(even)]];
}

/** The first place two finding lists differ, for a readable failure. */
function firstDifference(a: Finding[], b: Finding[]): string | null {
  for (let i = 0; i < Math.max(a.length, b.length); i++) {
    if (JSON.stringify(a[i]) !== JSON.stringify(b[i])) return `finding ${i}:\n whole: ${JSON.stringify(a[i])}\n split: ${JSON.stringify(b[i])}`;
  }
  return null;
}

async function expectSame(path: string, selection: RuleSelection = {}) {
  const { batches, sample } = await batchesOf(path);
  const n = batches.reduce((a, b) => a + b.length, 0);
  const bound = boundOf(batches);
  const whole = runWhole(ALL_RULES, batches, bound, selection, sample);
  for (const starts of cutsFor(n)) {
    const split = runInRanges(ALL_RULES, batches, bound, starts, selection, sample);
    expect(split, 'every rule can be split').not.toBeNull();
    expect(firstDifference(whole.findings, split!.findings), `ranges from rows ${starts.join(', ')}`).toBeNull();
    expect(split!.reports, `reports, ranges from rows ${starts.join(', ')}`).toEqual(whole.reports);
  }
}

describe('an input checked in row ranges gives the findings of one pass', () => {
  it('on the bundled sample catalog (every kind of planted error)', async () => {
    await expectSame(join(ROOT, 'sample-catalogs/thistlewood-dr1.csv'));
  });

  it('on the bundled sample catalog with --sigma auto', async () => {
    await expectSame(join(ROOT, 'sample-catalogs/thistlewood-dr1.csv'), { params: { 'mass-luminosity-outlier': { thresholdMode: 'auto' } } });
  });

  // A cap the real catalogs exceed: a later range lists rows one pass would not (RangeFilter).
  it.skipIf(!hasShared)('with uncertainty-invalid listing at most 2 rows per column and problem (PHL, ../shared/reference-data)', async () => {
    await expectSame(join(REFERENCE, 'phl-exoplanet-catalog/phl_exoplanet_catalog.csv'), { params: { 'uncertainty-invalid': { maxRowsPerColumn: 2 } } });
    await expectSame(join(REFERENCE, 'carmenes-mdwarfs/cif03.full_table.csv'), { params: { 'uncertainty-invalid': { maxRowsPerColumn: 1 } } });
  }, 60_000);

  const real = [
    'phl-exoplanet-catalog/phl_exoplanet_catalog.csv',
    'carmenes-mdwarfs/cif03.full_table.csv',
    'nasa-exoplanet-archive/PSCompPars_2024-10-15.csv',
    'wild-mixed-units/exoplanet_data_tmp.csv',
    'life-nearby-stars/sdb_30pc_09_02_2024.xml',
    'life-nearby-stars/Mamajek2022-04-16.csv',
    'massive-luminous-stars/RSG_catalog_4_11_24.csv',
    'mwdd-white-dwarfs/MWDD-export.csv',
  ];
  for (const file of real) {
    it.skipIf(!hasShared)(`on ${file} (../shared/reference-data)`, async () => {
      await expectSame(join(REFERENCE, file));
    }, 60_000);
  }
  if (!hasShared) it.skip(SKIP_SHARED, () => {});
});

/** Rule by rule, so a rule's own save and absorb are tested without the others' marks. */
describe('each rule alone, in row ranges, gives the findings of one pass', () => {
  for (const rule of ALL_RULES) {
    it(`${rule.meta.id} on the sample catalog${hasShared ? ' and two real catalogs' : ''}`, async () => {
      const paths = [join(ROOT, 'sample-catalogs/thistlewood-dr1.csv')];
      if (hasShared) paths.push(join(REFERENCE, 'phl-exoplanet-catalog/phl_exoplanet_catalog.csv'), join(REFERENCE, 'carmenes-mdwarfs/cif03.full_table.csv'));
      for (const p of paths) await expectSame(p, { only: [rule.meta.id] });
    }, 60_000);
  }
});
