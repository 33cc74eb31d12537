import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { REPO } from '../helpers/cli.js';
import { alarmTable, evaluateCatalog, kindTable, truthRows, type CatalogSpec } from './evaluate.js';

// The harness behind `npm run evaluate`, on the first 900 rows of the sample catalog (the invented
// Thistlewood survey, whose own planted rows are excluded from the untouched ones).
const SPEC: CatalogSpec = {
  name: 'Thistlewood DR1, first 900 rows',
  path: join(REPO, 'sample-catalogs/thistlewood-dr1.csv'),
  knownRows: truthRows(join(REPO, 'sample-catalogs/thistlewood-dr1.truth.json')),
  maxRows: 900,
  real: false,
};
const OPTS = { seed: 42, rounds: 2, fraction: 0.004, maxPerKind: 30 };

describe('the evaluation harness', () => {
  it('reproduces its table from a fixed seed', async () => {
    const a = await evaluateCatalog(SPEC, OPTS);
    const b = await evaluateCatalog(SPEC, OPTS);
    expect(kindTable(b.kinds)).toBe(kindTable(a.kinds));
    expect(alarmTable([b])).toBe(alarmTable([a]));
    expect(b).toEqual(a);
    // Every kind the sample's columns allow was planted (at least 2 rows per kind per round).
    expect(Object.keys(a.kinds).sort()).toEqual(
      ['decimal-L', 'decimal-M', 'duplicate-id', 'erg', 'kg', 'km', 'log-linear', 'logg-si', 'sentinel', 'super-eddington', 'swap-MR', 'watts'].sort(),
    );
    for (const t of Object.values(a.kinds)) expect(t.planted).toBe(2 * 4);
    // Gross unit slips are all found, with their cause named; nothing fires on the untouched rows.
    for (const k of ['watts', 'erg', 'kg', 'km']) expect(a.kinds[k].recalled, k).toBe(a.kinds[k].planted);
    expect(a.untouchedWithError).toBe(0);
    expect(a.untouched).toBe(2 * (900 - SPEC.knownRows!.filter((r) => r <= 900).length) - 2 * 12 * 4);
  });

  it('plants other rows for another seed', async () => {
    const a = await evaluateCatalog(SPEC, OPTS);
    const c = await evaluateCatalog(SPEC, { ...OPTS, seed: 43, keepMisses: false });
    expect(c.untouched).toBe(a.untouched);
    expect(c).not.toEqual(a);
  });
});
