/**
 * The headline checks as one DuckDB SQL query, built from the rules' own parameters and the
 * project's physics so the numbers cannot drift apart: eddington-limit, part of
 * value-out-of-range, duplicate-id and sentinel-value.
 *
 * The query is written for the benchmark catalog only. Its columns hold canonical units already
 * (M_sun, L_sun, pc, mas, K, dex, mag: see `starsieve columns`), so no conversion is needed; each
 * `e_` column is a symmetric error whose sign the binder drops (abs). What each count must equal in
 * starsieve's report is in compare.ts.
 */
import { eddingtonLimit } from '../../rules/checks/eddington-limit.js';
import { sentinelValue } from '../../rules/checks/sentinel-value.js';
import { valueOutOfRange } from '../../rules/checks/value-out-of-range.js';
import type { Rule } from '../../rules/engine/types.js';
import { QUANTITY_INFO, type NumericQuantity } from '../../rules/engine/quantities.js';
import { eddingtonPerSolarMass } from '../../rules/physics/eddington.js';
import { STELLAR_LIMITS } from '../../rules/physics/classify.js';

/** The rules the SQL does, as `--rules` takes them. */
export const HEADLINE_RULES = ['sentinel-value', 'eddington-limit', 'value-out-of-range', 'duplicate-id'] as const;

/**
 * value-out-of-range is judged in SQL only for the quantities whose verdicts do not depend on the
 * star's class (CLASS_RANGES has no range for them), so the SQL needs no classifier.
 */
export const RANGE_QUANTITIES = ['luminosity', 'distance', 'parallax', 'feh', 'mbol'] as const;

interface Col {
  q: NumericQuantity;
  /** Column name in the catalog, and its short SQL alias. */
  name: string;
  alias: string;
  error?: { name: string; alias: string };
}

/** The benchmark catalog's bound numeric columns (make-samples.ts COLUMNS). */
const COLS: readonly Col[] = [
  { q: 'mass', name: 'mass_Msun', alias: 'm', error: { name: 'e_mass_Msun', alias: 'em' } },
  { q: 'luminosity', name: 'lum_Lsun', alias: 'l', error: { name: 'e_lum_Lsun', alias: 'el' } },
  { q: 'radius', name: 'radius_Rsun', alias: 'r', error: { name: 'e_radius_Rsun', alias: 'er' } },
  { q: 'teff', name: 'teff_K', alias: 't', error: { name: 'e_teff_K', alias: 'et' } },
  { q: 'logg', name: 'logg', alias: 'g', error: { name: 'e_logg', alias: 'eg' } },
  { q: 'feh', name: 'feh', alias: 'z' },
  { q: 'parallax', name: 'parallax_mas', alias: 'p', error: { name: 'e_parallax_mas', alias: 'ep' } },
  { q: 'distance', name: 'dist_pc', alias: 'd' },
  { q: 'mbol', name: 'mbol', alias: 'b' },
];
const ALIAS = Object.fromEntries(COLS.map((c) => [c.q, c])) as Record<string, Col>;

function param(rule: Rule, name: string): number | string {
  const p = rule.meta.params.find((x) => x.name === name);
  if (!p) throw new Error(`${rule.meta.id} has no parameter ${name}`);
  return p.default as number | string;
}

/** A double as SQL: parsed from its shortest round-trip text, so DuckDB holds the very same double (a bare 0.02 would be a DECIMAL). */
function dbl(x: number): string {
  return `'${String(x)}'::DOUBLE`;
}

export type Source = 'csv' | 'parquet';

/** Everything the query needs to know, worked out from the rules' defaults. */
export function checkConstants() {
  const codes = String(param(sentinelValue, 'codes'))
    .split(',')
    .map((s) => Number(s.trim()))
    .filter((x) => Number.isFinite(x));
  return {
    codes,
    absCodes: [...new Set(codes.map(Math.abs))],
    /** sentinel-value: errors of log quantities are codes from this many dex (LOG_ERROR_CODE_MIN). */
    logErrorCodeMin: 10,
    x: Number(param(eddingtonLimit, 'hydrogenFraction')),
    eddSigmas: Number(param(eddingtonLimit, 'sigmas')),
    perMassX: eddingtonPerSolarMass(Number(param(eddingtonLimit, 'hydrogenFraction'))),
    perMassX0: eddingtonPerSolarMass(0),
    rangeSigmas: Number(param(valueOutOfRange, 'sigmas')),
    fehMin: Number(param(valueOutOfRange, 'fehMin')),
    fehMax: Number(param(valueOutOfRange, 'fehMax')),
  };
}

/**
 * The SQL for one source: `counts` returns one row with the counts named as in `CountName`;
 * `flagged(check)` lists the rows one row-level check flags (id and cells), for tracing a mismatch.
 *
 * Sentinel screening is done first, as the screen stage of starsieve does: a value that equals a
 * code and that no star can have is withheld from the judging checks, and an error that equals a
 * code and is as large as its value (10 dex for logg) counts as no error. The rule's second test,
 * a positive code far (familyFactor) above the 99th percentile of its batch, depends on how rows
 * fall into batches and is left out; on the benchmark catalog it never fires (the comparison shows it).
 */
export function checksSql(source: Source, path: string): { counts: string; flagged: (check: RowCheck) => string } {
  const k = checkConstants();
  const quoted = path.replace(/'/g, "''");
  const from =
    source === 'csv'
      ? // Every cell as text and TRY_CAST: a cell such as `2.5?` becomes NULL as in starsieve, where a
        // typed read would stop with a conversion error or (ignore_errors) drop the whole row.
        `read_csv('${quoted}', header = true, comment = '#', delim = ',', all_varchar = true, null_padding = true)`
      : `read_parquet('${quoted}')`;
  const num = (name: string) => (source === 'csv' ? `TRY_CAST("${name}" AS DOUBLE)` : `"${name}"`);
  const codeList = k.codes.map(dbl).join(', ');
  const absCodeList = k.absCodes.map(dbl).join(', ');

  /** sentinel-value's `impossible`: no star has this value (canonical unit). */
  const impossible = (q: NumericQuantity, x: string) => {
    const parts: string[] = [];
    if (QUANTITY_INFO[q].positive) parts.push(`${x} <= 0`);
    const lim = STELLAR_LIMITS[q];
    if (lim) parts.push(`${x} < ${dbl(lim.min)}`, `${x} > ${dbl(lim.max)}`);
    return parts.length ? `(${parts.join(' OR ')})` : 'false';
  };

  const selectRaw = [
    `CASE WHEN lower(trim("star_id")) IN ('', 'nan', 'null', 'none', '--') THEN NULL ELSE trim("star_id") END AS id`,
    ...COLS.flatMap((c) => [`${num(c.name)} AS ${c.alias}`, ...(c.error ? [`${num(c.error.name)} AS ${c.error.alias}`] : [])]),
  ];
  const selectValueCodes = COLS.map((c) => `coalesce(${c.alias} IN (${codeList}) AND ${impossible(c.q, c.alias)}, false) AS ${c.alias}_code`);
  const selectErrorCodes = COLS.filter((c) => c.error).map((c) => {
    const v = c.alias;
    const e = c.error!.alias;
    const logLike = c.q === 'logg' || c.q === 'feh' || c.q === 'mbol';
    const large = logLike ? `abs(${e}) >= ${dbl(k.logErrorCodeMin)}` : `abs(${e}) >= abs(${v})`;
    return `coalesce(abs(${e}) IN (${absCodeList}) AND (${v}_code OR (${v} IS NOT NULL AND ${large})), false) AS ${e}_code`;
  });
  // Usable value (NULL when missing or a code) and error magnitude (0 when missing or a code).
  const selectUsable = COLS.flatMap((c) => {
    const v = c.alias;
    const out = [`CASE WHEN ${v}_code THEN NULL ELSE ${v} END AS ${v}_u`];
    if (c.error) {
      const e = c.error.alias;
      out.push(`CASE WHEN ${e}_code OR ${e} IS NULL THEN ${dbl(0)} ELSE abs(${e}) END AS ${e}_u`);
    }
    return out;
  });

  const m = ALIAS.mass.alias;
  const l = ALIAS.luminosity.alias;
  const es = dbl(k.eddSigmas);
  // eddington-limit's lower log error of L in dex: log10 L - log10(L - e); zero when the error is
  // missing. An error reaching zero (L - e <= 0) leaves L - k sigma unbounded below (0 here), so
  // such a row never fires unless k = 0.
  const dlog = `CASE WHEN el_u > 0 AND ${l} - el_u > 0 THEN log10(${l}) - log10(${l} - el_u) ELSE ${dbl(0)} END`;
  const unbounded = `(el_u > 0 AND ${l} - el_u <= 0 AND ${es} > 0)`;
  // L at minus k sigma, M at plus k sigma; CASE keeps log10 away from non-positive values.
  const selectEdd = [
    `CASE WHEN ${m}_u > 0 AND ${l}_u > 0 THEN (CASE WHEN ${unbounded} THEN ${dbl(0)} ELSE pow(${dbl(10)}, log10(${l}) - ${es} * (${dlog})) END) END AS edd_low_l`,
    `${m}_u + ${es} * em_u AS edd_high_m`,
  ];

  const rs = dbl(k.rangeSigmas);
  /** value-out-of-range's hard (and, for [Fe/H], warning) bounds with the error towards the range. */
  const outOfRange = (q: NumericQuantity) => {
    const c = ALIAS[q];
    const v = `${c.alias}_u`;
    const lo = c.error ? `${v} + ${rs} * ${c.error.alias}_u` : v;
    const hi = c.error ? `${v} - ${rs} * ${c.error.alias}_u` : v;
    const parts: string[] = [];
    if (QUANTITY_INFO[q].positive) parts.push(`${v} <= 0`);
    const lim = STELLAR_LIMITS[q];
    if (lim) parts.push(`${lo} < ${dbl(lim.min)}`, `${hi} > ${dbl(lim.max)}`);
    if (q === 'feh') parts.push(`${lo} < ${dbl(k.fehMin)}`, `${hi} > ${dbl(k.fehMax)}`);
    return parts.join(' OR ');
  };

  const conditions: Record<RowCheck, string> = {
    eddington_flagged: `edd_low_l > ${dbl(k.perMassX)} * edd_high_m`,
    eddington_errors: `edd_low_l > ${dbl(k.perMassX0)} * edd_high_m`,
    range_luminosity: outOfRange('luminosity'),
    range_distance: outOfRange('distance'),
    range_parallax: outOfRange('parallax'),
    range_feh: outOfRange('feh'),
    range_mbol: outOfRange('mbol'),
  };
  const cte = `WITH raw AS (
  SELECT
    ${selectRaw.join(',\n    ')}
  FROM ${from}
), value_codes AS (
  SELECT *,
    ${selectValueCodes.join(',\n    ')}
  FROM raw
), error_codes AS (
  SELECT *,
    ${selectErrorCodes.join(',\n    ')}
  FROM value_codes
), usable AS (
  SELECT *,
    ${selectUsable.join(',\n    ')}
  FROM error_codes
), judged AS (
  SELECT *,
    ${selectEdd.join(',\n    ')}
  FROM usable
)`;
  const valueCodes = COLS.map((c) => `count_if(${c.alias}_code)`).join(' + ');
  const errorCodes = COLS.filter((c) => c.error).map((c) => `count_if(${c.error!.alias}_code)`).join(' + ');
  const counts = `${cte}
SELECT
  count(*) AS rows,
  ${valueCodes} AS sentinel_value_cells,
  ${errorCodes} AS sentinel_error_cells,
  ${ROW_CHECKS.map((c) => `count_if(${conditions[c]}) AS ${c}`).join(',\n  ')},
  count(id) - count(DISTINCT id) AS duplicate_id_repeats
FROM judged`;
  const columns = ['id', ...COLS.flatMap((c) => [c.alias, ...(c.error ? [c.error.alias] : [])])].join(', ');
  const flagged = (check: RowCheck) => `${cte}\nSELECT ${columns} FROM judged WHERE ${conditions[check]}`;
  return { counts, flagged };
}

/** Row-level checks, each a count of rows whose condition holds (and a list of them on demand). */
export const ROW_CHECKS = [
  'eddington_flagged',
  'eddington_errors',
  'range_luminosity',
  'range_distance',
  'range_parallax',
  'range_feh',
  'range_mbol',
] as const;
export type RowCheck = (typeof ROW_CHECKS)[number];

/** Catalog column names of the aliases a flagged-rows query returns. */
export const ALIAS_COLUMNS: Readonly<Record<string, string>> = Object.fromEntries(
  COLS.flatMap((c) => [[c.alias, c.name], ...(c.error ? [[c.error.alias, c.error.name]] : [])]),
);

/** The counts the query returns. */
export const COUNT_NAMES = [
  'rows',
  'sentinel_value_cells',
  'sentinel_error_cells',
  ...ROW_CHECKS,
  'duplicate_id_repeats',
] as const;
export type CountName = (typeof COUNT_NAMES)[number];
