import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { PRECOMPILED_FILE, compileSchema, precompiledValidator, schemaStamp } from '../../src/method/schema-validator.js';
import { ROOT, SCHEMA_TEXT, cases, verdict } from '../helpers/method-schema-cases.js';

/** The method validator `npm run build` precompiled into dist/ (the validator's own tests: tests/method/schema-validator.test.ts). */
const BUILT = join(ROOT, 'dist/method', PRECOMPILED_FILE);

describe('the precompiled method validator in dist/', () => {
  const runTime = compileSchema(SCHEMA_TEXT);
  it('the one npm run build wrote is current and agrees too', () => {
    if (!existsSync(BUILT)) throw new Error(`${BUILT} is missing: run \`npm run build\` first (npm test does)`);
    const built = precompiledValidator(BUILT, { stamp: schemaStamp(SCHEMA_TEXT) });
    expect(built).toBeTypeOf('function');
    for (const [, data] of cases) expect(verdict(built!, data)).toEqual(verdict(runTime, data));
  });
});
