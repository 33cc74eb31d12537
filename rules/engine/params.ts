import type { ParamSpec, ParamValue, ParamValues, RuleMeta } from './types.js';

/** A rule selection or parameter that makes no sense: reported in one line, exit code 2. */
export class ConfigError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'ConfigError';
  }
}

function coerce(spec: ParamSpec, ruleId: string, raw: ParamValue): ParamValue {
  const where = `${ruleId}.${spec.name}`;
  if (spec.type === 'number') {
    const n = typeof raw === 'number' ? raw : Number(raw);
    if (typeof raw === 'string' && raw.trim() === '') throw new ConfigError(`parameter ${where} needs a number`);
    if (!Number.isFinite(n)) throw new ConfigError(`parameter ${where} needs a number, got "${raw}"`);
    if (spec.min !== undefined && n < spec.min) throw new ConfigError(`parameter ${where} must be >= ${spec.min}, got ${n}`);
    if (spec.max !== undefined && n > spec.max) throw new ConfigError(`parameter ${where} must be <= ${spec.max}, got ${n}`);
    return n;
  }
  if (spec.type === 'boolean') {
    if (typeof raw === 'boolean') return raw;
    if (raw === 'true' || raw === 'yes' || raw === '1') return true;
    if (raw === 'false' || raw === 'no' || raw === '0') return false;
    throw new ConfigError(`parameter ${where} needs true or false, got "${raw}"`);
  }
  const s = String(raw);
  if (spec.choices && !spec.choices.includes(s)) {
    throw new ConfigError(`parameter ${where} must be one of ${spec.choices.join(', ')}; got "${s}"`);
  }
  return s;
}

/** The rule's parameters: its defaults, overridden by what the user gave, each validated. */
export function resolveParams(meta: RuleMeta, overrides: Readonly<Record<string, ParamValue>>): ParamValues {
  const out: Record<string, ParamValue> = {};
  for (const spec of meta.params) out[spec.name] = spec.default;
  for (const [name, raw] of Object.entries(overrides)) {
    const spec = meta.params.find((p) => p.name === name);
    if (!spec) {
      const known = meta.params.map((p) => p.name).join(', ') || 'none';
      throw new ConfigError(`rule ${meta.id} has no parameter "${name}" (it has: ${known})`);
    }
    out[name] = coerce(spec, meta.id, raw);
  }
  return out;
}
