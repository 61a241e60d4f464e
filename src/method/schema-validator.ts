import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { fileURLToPath } from 'node:url';
import type { ErrorObject } from 'ajv';

/**
 * The validator of templates/method.schema.json.
 *
 * Compiling the schema with ajv took about a tenth of a second of every run's
 * start-up, so `npm run build` compiles it once (scripts/precompile-method-schema.mjs,
 * ajv's standalone code, see ./schema-codegen.ts) into
 * dist/method/method-schema.validate.cjs, stamped with the SHA-256 of the schema
 * text it was made from. At run time that file is used when its stamp matches the
 * schema as it is now; otherwise (running from src/, a schema edited since the
 * build) ajv compiles the schema here, with the same options. Either way the
 * verdict and the first error are the same (tests/method/schema-validator.test.ts).
 */
export interface SchemaValidator {
  (data: unknown): boolean;
  errors?: ErrorObject[] | null;
}

/** ajv options of both ways (the build adds only `code.source`): the first error only, unknown keywords allowed. */
export const AJV_OPTIONS = { allErrors: false, strict: false } as const;

/** Name of the build's precompiled validator, next to this module in dist/method/. */
export const PRECOMPILED_FILE = 'method-schema.validate.cjs';

/** templates/method.schema.json. */
export const SCHEMA_URL = new URL('../../templates/method.schema.json', import.meta.url);
const PRECOMPILED_URL = new URL(`./${PRECOMPILED_FILE}`, import.meta.url);

// Loaded when needed, from node_modules (the bundled CLI keeps these run-time loads).
const loadCommonJs = createRequire(import.meta.url);

/** SHA-256 (hex) of the schema text, the stamp a precompiled validator carries. */
export function schemaStamp(schemaText: string): string {
  return createHash('sha256').update(schemaText, 'utf8').digest('hex');
}

let validator: SchemaValidator | undefined;

/** The method schema's validator, made once per process. */
export function methodSchemaValidator(): SchemaValidator {
  if (!validator) {
    const schemaText = readFileSync(SCHEMA_URL, 'utf8');
    validator = precompiledValidator(fileURLToPath(PRECOMPILED_URL), { stamp: schemaStamp(schemaText) }) ?? compileSchema(schemaText);
  }
  return validator;
}

/** The validator in a precompiled file when it carries `stamp`; undefined when the file is missing or stale. */
export function precompiledValidator(file: string, options: { stamp: string }): SchemaValidator | undefined {
  let mod: (SchemaValidator & { schemaSha256?: string }) | undefined;
  try {
    mod = loadCommonJs(file) as SchemaValidator & { schemaSha256?: string };
  } catch (err) {
    if ((err as NodeJS.ErrnoException).code === 'MODULE_NOT_FOUND') return undefined;
    throw err;
  }
  return typeof mod === 'function' && mod.schemaSha256 === options.stamp ? mod : undefined;
}

type AjvClass = typeof import('ajv').default;

/** ajv's class, loaded from node_modules when first needed (its CommonJS export may or may not carry `default`). */
export function loadAjv(): AjvClass {
  const mod = loadCommonJs('ajv') as AjvClass & { default?: AjvClass };
  return mod.default ?? mod;
}

/** Compile the schema with ajv now (the way without a build). */
export function compileSchema(schemaText: string): SchemaValidator {
  const Ajv = loadAjv();
  return new Ajv({ ...AJV_OPTIONS }).compile(JSON.parse(schemaText) as object) as SchemaValidator;
}
