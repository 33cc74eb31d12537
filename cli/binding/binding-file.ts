/**
 * The binding file: for catalogs whose column names and metadata say nothing (a literature table
 * with columns `c1`..`c9`), a small YAML (or JSON) file says which column is which quantity, in
 * which unit, and which columns are uncertainties. Every mistake in it is reported with the
 * file's line and column. It turns into the same options `--bind` and `--unit` give; options on
 * the command line override the file column by column.
 *
 *   starsieve-binding: 1
 *   columns:
 *     c1: id
 *     c2: { quantity: mass, unit: solMass }
 *     c3: { quantity: mass, error: symmetric }
 *     c4: { quantity: luminosity, unit: log(solLum) }
 *     c5: { quantity: luminosity, error: lower, unit: dex }
 *     c9: none
 */
import { readFileSync } from 'node:fs';
import { NUMERIC_QUANTITIES, TEXT_QUANTITIES, isNumericQuantity, isQuantity, type Quantity } from '../../rules/engine/quantities.js';
import { describeIoError } from '../readers/common.js';
import { YamlProblem, parseYaml, type Position } from '../readers/yaml-text.js';
import { checkUnitText, parseOptionRole, roleText, type BindOrigins } from './bind-options.js';
import { quantityUnit } from './convert.js';
import { BindingError, type BindOptions } from './types.js';

export const BINDING_FILE_VERSION = 1;

const ERROR_SIDES: Readonly<Record<string, 'err' | 'errLo' | 'errHi'>> = {
  symmetric: 'err',
  sym: 'err',
  lower: 'errLo',
  lo: 'errLo',
  upper: 'errHi',
  hi: 'errHi',
};
const ENTRY_KEYS = new Set(['quantity', 'error', 'unit', 'description']);
const TOP_KEYS = new Set(['starsieve-binding', 'columns', 'description']);
const QUANTITIES = [...NUMERIC_QUANTITIES, ...TEXT_QUANTITIES].join(', ');

export type FileBindOptions = BindOptions & BindOrigins;

/** Reads and checks a binding file; throws BindingError naming the line and column of the first problem. */
export function readBindingFile(path: string): FileBindOptions {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (err) {
    throw new BindingError(`cannot read the binding file ${path}: ${describeIoError(err)}`, null);
  }
  return parseBindingFile(text, path);
}

export function parseBindingFile(text: string, path: string): FileBindOptions {
  const fail = (message: string, p: Position): never => {
    throw new BindingError(`${path}, line ${p.line}, column ${p.column}: ${message}`, null);
  };
  let doc;
  try {
    doc = parseYaml(text);
  } catch (err) {
    if (err instanceof YamlProblem) fail(`the binding file is ${err.message}`, err.position);
    throw err;
  }
  // Tags the YAML schema does not know (`!!js/function`, `!custom`) would otherwise be read as
  // plain strings; say plainly that a binding file holds data only, and nothing is ever run.
  const tag = doc.doc.warnings.find((w) => w.code === 'TAG_RESOLVE_FAILED');
  if (tag) {
    const name = /Unresolved tag: (\S+)/.exec(tag.message)?.[1]?.replace(/^tag:yaml\.org,2002:/, '!!') ?? 'a tag';
    fail(`the tag ${name} is not accepted: a binding file holds plain data (strings and mappings), and nothing in it is ever run`, doc.at(tag.pos[0]));
  }
  const top = doc.value as Record<string, unknown> | null;
  if (top === null || typeof top !== 'object' || Array.isArray(top)) {
    return fail('a binding file is a mapping with a `columns` key (see README.md, "Binding file")', doc.where([]));
  }
  for (const key of Object.keys(top)) {
    if (!TOP_KEYS.has(key)) fail(`unknown key \`${key}\`; a binding file has \`starsieve-binding\`, \`columns\` and \`description\``, doc.whereKey([key]));
  }
  const version = top['starsieve-binding'];
  if (version !== undefined && version !== BINDING_FILE_VERSION) {
    fail(`starsieve-binding: ${JSON.stringify(version)} is not a version this starsieve reads (it reads ${BINDING_FILE_VERSION})`, doc.where(['starsieve-binding']));
  }
  const columns = top.columns;
  if (columns === null || typeof columns !== 'object' || Array.isArray(columns)) {
    return fail('`columns` must be a mapping from column name to its role', doc.where(['columns']));
  }

  const out: FileBindOptions = { bind: {}, units: {}, origins: {}, unitOrigins: {} };
  const bind = out.bind as Record<string, string>;
  const units = out.units as Record<string, string>;
  const origins = out.origins as Record<string, string>;
  const unitOrigins = out.unitOrigins as Record<string, string>;
  const owners = new Map<string, string>();
  for (const [column, entry] of Object.entries(columns as Record<string, unknown>)) {
    const at = doc.where(['columns', column]);
    const where = `${path}, line ${at.line}`;
    const origin = `the binding file ${where}`;
    let quantity: Quantity | null = null;
    let role: string | null = null;
    let unit: string | null = null;
    if (typeof entry === 'string') {
      role = entry.trim();
    } else if (entry !== null && typeof entry === 'object' && !Array.isArray(entry)) {
      const e = entry as Record<string, unknown>;
      for (const k of Object.keys(e)) {
        if (!ENTRY_KEYS.has(k)) fail(`column \`${column}\`: unknown key \`${k}\`; use quantity, error, unit (and description)`, doc.whereKey(['columns', column, k]));
      }
      if (e.quantity !== undefined) {
        if (typeof e.quantity !== 'string' || !isQuantity(e.quantity.trim()) && e.quantity.trim() !== 'none') {
          fail(`column \`${column}\`: quantity ${JSON.stringify(e.quantity)} is not one of ${QUANTITIES} (or none)`, doc.where(['columns', column, 'quantity']));
        }
        role = (e.quantity as string).trim();
        if (role !== 'none') quantity = role as Quantity;
      }
      if (e.error !== undefined) {
        const side = typeof e.error === 'string' ? ERROR_SIDES[e.error.trim().toLowerCase()] : undefined;
        if (side === undefined) fail(`column \`${column}\`: error must be symmetric, lower or upper, not ${JSON.stringify(e.error)}`, doc.where(['columns', column, 'error']));
        if (quantity === null || !isNumericQuantity(quantity)) {
          fail(`column \`${column}\`: an error column needs the numeric quantity it belongs to (quantity: mass, ...)`, doc.where(['columns', column]));
        }
        role = `${quantity}.${side}`;
      }
      if (e.unit !== undefined) {
        if (typeof e.unit !== 'string' || e.unit.trim() === '') fail(`column \`${column}\`: unit must be a unit string such as solLum or log(cm.s**-2)`, doc.where(['columns', column, 'unit']));
        unit = (e.unit as string).trim();
      }
      if (role === null && unit === null) fail(`column \`${column}\`: give a quantity, a unit, or both`, at);
    } else {
      fail(`column \`${column}\`: give a role (mass, mass.err, none, ...) or a mapping with quantity, error and unit`, at);
    }

    if (role !== null) {
      let parsed;
      try {
        parsed = parseOptionRole(column, role);
      } catch {
        return fail(
          `column \`${column}\`: \`${role}\` is not a role; use a quantity (${QUANTITIES}), an uncertainty such as mass.err, mass.errLo or mass.errHi, or none`,
          at,
        );
      }
      if (parsed !== 'none') {
        quantity = parsed.quantity;
        const key = roleText(parsed);
        const prev = owners.get(key);
        if (prev !== undefined) fail(`${key} is given to both \`${prev}\` and \`${column}\`; give it to one of them`, at);
        owners.set(key, column);
      }
      bind[column] = role;
      origins[column] = origin;
    }
    if (unit !== null) {
      const unitAt = doc.where(['columns', column, 'unit']);
      try {
        // An error's unit may differ from its value's (dex for a log value); the binder checks it against the value.
        if (quantity !== null && isNumericQuantity(quantity) && !/\.err/.test(bind[column] ?? '')) {
          quantityUnit(quantity, unit, column, 'as the binding file gives it');
        } else {
          checkUnitText(unit, column);
        }
      } catch (err) {
        // The advice about --unit and --bind fits the command line, not this file.
        if (err instanceof BindingError) fail(err.message.replace(/^--unit [^:]*: /, '').replace(/; fix the unit with --unit .*$/, ''), unitAt);
        throw err;
      }
      units[column] = unit;
      unitOrigins[column] = origin;
    }
  }
  return out;
}

/** The file's options with the command line's on top: a column given on both follows the command line. */
export function withCommandLine(file: FileBindOptions | null, cli: BindOptions): FileBindOptions {
  if (file === null) return { bind: { ...cli.bind }, units: { ...cli.units } };
  const origins = { ...file.origins };
  const unitOrigins = { ...file.unitOrigins };
  for (const c of Object.keys(cli.bind)) delete origins[c];
  for (const c of Object.keys(cli.units)) delete unitOrigins[c];
  return { bind: { ...file.bind, ...cli.bind }, units: { ...file.units, ...cli.units }, origins, unitOrigins };
}
