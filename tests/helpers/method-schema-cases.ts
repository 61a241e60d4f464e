/**
 * The methods the schema validator is tested on (tests/method/schema-validator.test.ts and the built
 * validator's e2e test): every shipped template, the smallest method, and one per schema rule broken.
 */
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { parse } from 'yaml';
import type { SchemaValidator } from '../../src/method/schema-validator.js';

export const ROOT = join(import.meta.dirname, '../..');
export const SCHEMA_TEXT = readFileSync(join(ROOT, 'templates/method.schema.json'), 'utf8');

export const templates = readdirSync(join(ROOT, 'templates'))
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

export const cases: Array<[string, unknown, boolean]> = [
  ...templates.map(([f, data]) => [`shipped ${f}`, data, true] as [string, unknown, boolean]),
  ['the smallest method', { name: 'x', formulas: F }, true],
  ...invalid.map(([title, data]) => [title, data, false] as [string, unknown, boolean]),
];

export function verdict(validate: SchemaValidator, data: unknown) {
  const valid = validate(structuredClone(data));
  return { valid, errors: valid ? null : structuredClone(validate.errors) };
}

