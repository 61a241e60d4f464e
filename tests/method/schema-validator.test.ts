import { existsSync, mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { parse } from 'yaml';
import { afterAll, describe, expect, it } from 'vitest';
import { validatorModuleSource } from '../../src/method/schema-codegen.js';
import {
  PRECOMPILED_FILE,
  compileSchema,
  methodSchemaValidator,
  precompiledValidator,
  schemaStamp,
  type SchemaValidator,
} from '../../src/method/schema-validator.js';

/*
 * The build compiles the method schema ahead of time (ajv standalone code); runs use that
 * code instead of compiling. The reference is ajv's own run-time compiler with the same
 * options: for every method below, valid or not, both must give the same verdict and the
 * same errors (load.ts words its message from the first one).
 */
const ROOT = join(import.meta.dirname, '../..');
const SCHEMA_TEXT = readFileSync(join(ROOT, 'templates/method.schema.json'), 'utf8');
const BUILT = join(ROOT, 'dist/method', PRECOMPILED_FILE);

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

const templates = readdirSync(join(ROOT, 'templates'))
  .filter((f) => f.endsWith('.yaml'))
  .map((f) => [f, parse(readFileSync(join(ROOT, 'templates', f), 'utf8')) as unknown] as const);

const F = [{ name: 'y', expr: 'extract_conc * 2' }];
// Each breaks one rule of templates/method.schema.json (the keyword in the title).
const invalid: Array<[string, unknown]> = [
  ['required: no formulas', { name: 'x' }],
  ['required: a formula without expr', { name: 'x', formulas: [{ name: 'y' }] }],
  ['additionalProperties: an unknown top-level key', { name: 'x', colour: 'blue', formulas: F }],
  ['additionalProperties: an unknown key in a limit set', { name: 'x', limits: { lcs: { recovery: [70, 130], max: 3 } }, formulas: F }],
  ['type: the method is a list', [1, 2]],
  ['type: name is a number', { name: 7, formulas: F }],
  ['type: version is a list', { name: 'x', version: [1], formulas: F }],
  ['pattern: a name starting with a dot', { name: '.x', formulas: F }],
  ['pattern: a formula name with a capital', { name: 'x', formulas: [{ name: 'Y', expr: '1' }] }],
  ['minItems: no formulas in the list', { name: 'x', formulas: [] }],
  ['minItems: a recovery range of one', { name: 'x', limits: { lcs: { recovery: [70] } }, formulas: F }],
  ['maxItems: a calibration range of three', { name: 'x', analytes: { A: { calibration_range: [1, 2, 3] } }, formulas: F }],
  ['minLength: an empty unit', { name: 'x', units: { volume: '' }, formulas: F }],
  ['maxLength: a 41-character unit', { name: 'x', units: { volume: 'm'.repeat(41) }, formulas: F }],
  ['minimum: a negative rpd_max', { name: 'x', limits: { ms: { rpd_max: -1 } }, formulas: F }],
  ['maximum: a pH of 15', { name: 'x', analytes: { A: { ph: 15 } }, formulas: F }],
  ['exclusiveMinimum: an alpha of 0', { name: 'x', qc: { alpha: 0 }, formulas: F }],
  ['enum: an unknown outlier test', { name: 'x', qc: { outlier_test: 'chauvenet' }, formulas: F }],
  ['enum: an unknown sample type', { name: 'x', sample_types: { S: 'spike' }, formulas: F }],
  ['propertyNames: a field that is not canonical', { name: 'x', fields: { volume_sample: { aliases: ['V'] } }, formulas: F }],
  ['$ref: a nested level with a bad recovery', { name: 'x', limits: { qc: { levels: { lloq: { recovery: 'wide' } } } }, formulas: F }],
  ['type: a surrogate flag as text', { name: 'x', analytes: { A: { surrogate: 'yes' } }, formulas: F }],
];

const cases: Array<[string, unknown, boolean]> = [
  ...templates.map(([f, data]) => [`shipped ${f}`, data, true] as [string, unknown, boolean]),
  ['the smallest method', { name: 'x', formulas: F }, true],
  ...invalid.map(([title, data]) => [title, data, false] as [string, unknown, boolean]),
];

function verdict(validate: SchemaValidator, data: unknown) {
  const valid = validate(structuredClone(data));
  return { valid, errors: valid ? null : structuredClone(validate.errors) };
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

  it('the one npm run build wrote is current and agrees too', () => {
    if (!existsSync(BUILT)) throw new Error(`${BUILT} is missing: run \`npm run build\` first (npm test does)`);
    const built = precompiledValidator(BUILT, { stamp: schemaStamp(SCHEMA_TEXT) });
    expect(built).toBeTypeOf('function');
    for (const [, data] of cases) expect(verdict(built!, data)).toEqual(verdict(runTime, data));
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
