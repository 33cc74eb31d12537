import { ConfigError } from '../rules/engine/params.js';
import type { RuleSelection } from '../rules/engine/runner.js';
import type { ParamValue, Severity } from '../rules/engine/types.js';
import type { BindOptions } from './binding/types.js';

/** Splits `a=b` option values; a missing `=` is a usage error naming the option. */
export function parsePairs(values: readonly string[], option: string): [string, string][] {
  return values.map((v) => {
    const eq = v.lastIndexOf('=');
    if (eq <= 0 || eq === v.length - 1) throw new ConfigError(`${option} needs COLUMN=VALUE, got "${v}"`);
    return [v.slice(0, eq).trim(), v.slice(eq + 1).trim()];
  });
}

export function bindOptionsFrom(bind: readonly string[], unit: readonly string[]): BindOptions {
  return {
    bind: Object.fromEntries(parsePairs(bind, '--bind')),
    units: Object.fromEntries(parsePairs(unit, '--unit')),
  };
}

function list(v: string | undefined): string[] | undefined {
  return v === undefined ? undefined : v.split(',').map((s) => s.trim()).filter(Boolean);
}

export interface SelectionFlags {
  rules?: string;
  skip?: string;
  param: string[];
  sigma?: string;
  hydrogen?: string;
  relation?: string;
}

/** Rule selection and parameters from the command line; the shortcut flags map to rule parameters. */
export function selectionFrom(flags: SelectionFlags): RuleSelection {
  const params: Record<string, Record<string, ParamValue>> = {};
  const set = (rule: string, name: string, value: string) => ((params[rule] ??= {})[name] = value);
  for (const [key, value] of parsePairs(flags.param, '--param')) {
    const dot = key.indexOf('.');
    if (dot <= 0) throw new ConfigError(`--param needs RULE.NAME=VALUE, got "${key}=${value}"`);
    set(key.slice(0, dot), key.slice(dot + 1), value);
  }
  // `--sigma auto` lets the number of stars judged set the threshold (the rule's thresholdMode);
  // a number sets the fixed threshold.
  if (flags.sigma !== undefined) {
    if (flags.sigma.trim().toLowerCase() === 'auto') set('mass-luminosity-outlier', 'thresholdMode', 'auto');
    else set('mass-luminosity-outlier', 'threshold', flags.sigma);
  }
  if (flags.relation !== undefined) set('mass-luminosity-outlier', 'relation', flags.relation);
  if (flags.hydrogen !== undefined) set('eddington-limit', 'hydrogenFraction', flags.hydrogen);
  return { only: list(flags.rules), skip: list(flags.skip), params };
}

/** How the inputs are read and bound: the options `check` and `columns` share. */
export interface InputFlags {
  bind: string[];
  unit: string[];
  binding?: string;
  format?: string;
  delimiter?: string;
  hdu?: number;
  table?: number;
}

export type FailLevel = Severity | 'never';
export const FAIL_LEVELS: readonly FailLevel[] = ['error', 'warning', 'note', 'never'];
