import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { validatorModuleSource } from '../../src/method/schema-codegen.js';
import { ROOT, SCHEMA_TEXT, cases, templates, verdict } from '../helpers/method-schema-cases.js';
import {
  compileSchema,
  methodSchemaValidator,
  precompiledValidator,
  schemaStamp,
} from '../../src/method/schema-validator.js';

/*
 * The build compiles the method schema ahead of time (ajv standalone code); runs use that
 * code instead of compiling. The reference is ajv's own run-time compiler with the same
 * options: for every method below, valid or not, both must give the same verdict and the
 * same errors (load.ts words its message from the first one).
 */

// The generated module requires ajv's run-time helpers, so it is written where node_modules is found.
const scratch = join(ROOT, 'node_modules/.cache');
mkdirSync(scratch, { recursive: true });
const dir = mkdtempSync(join(scratch, 'phasebook-validator-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function writeModule(name: string, source: string): string {
  const file = join(dir, name);
  writeFileSync(file, source);
  return file;
}

describe('the precompiled method validator', () => {
  const runTime = compileSchema(SCHEMA_TEXT);
  const generated = precompiledValidator(writeModule('generated.cjs', validatorModuleSource(SCHEMA_TEXT)), {
    stamp: schemaStamp(SCHEMA_TEXT),
  });

  it('is made from the schema and carries its stamp', () => {
    expect(generated).toBeTypeOf('function');
    expect(templates.length).toBeGreaterThanOrEqual(4);
  });

  it.each(cases)('%s: same verdict and errors as ajv compiling at run time', (_title, data, valid) => {
    const expected = verdict(runTime, data);
    expect(expected.valid).toBe(valid);
    if (!valid) expect(expected.errors!.length).toBeGreaterThan(0);
    expect(verdict(generated!, data)).toEqual(expected);
  });

  it('is not used when made from another schema text, or when missing', () => {
    const other = SCHEMA_TEXT.replace('"maxLength": 40', '"maxLength": 41');
    expect(other).not.toBe(SCHEMA_TEXT);
    const stale = writeModule('stale.cjs', validatorModuleSource(other));
    expect(precompiledValidator(stale, { stamp: schemaStamp(SCHEMA_TEXT) })).toBeUndefined();
    expect(precompiledValidator(stale, { stamp: schemaStamp(other) })).toBeTypeOf('function');
    expect(precompiledValidator(join(dir, 'none.cjs'), { stamp: schemaStamp(SCHEMA_TEXT) })).toBeUndefined();
  });

  it('a run from the sources, with no build beside them, compiles the schema and judges the same', () => {
    const validate = methodSchemaValidator();
    for (const [, data] of cases) expect(verdict(validate, data)).toEqual(verdict(runTime, data));
  });
});
