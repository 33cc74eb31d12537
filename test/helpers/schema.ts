import { Ajv } from 'ajv';
import addFormatsModule from 'ajv-formats';

// ajv-formats is CommonJS with a default export; under nodenext the callable sits on `.default`.
const addFormats = ((addFormatsModule as unknown as { default?: unknown }).default ?? addFormatsModule) as unknown as (ajv: Ajv) => Ajv;

/** A draft-07 validator with the standard formats, for the project's own report schema. */
export function draft07Validator(schema: object) {
  const ajv = new Ajv({ allErrors: true, strict: false });
  addFormats(ajv);
  return ajv.compile(schema);
}
