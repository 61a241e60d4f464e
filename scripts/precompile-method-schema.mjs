// Build step (after tsc): compile templates/method.schema.json once into
// dist/method/method-schema.validate.cjs, so that runs do not compile it
// (src/method/schema-validator.ts says when the file is used).
import { readFileSync, writeFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

const root = new URL('..', import.meta.url);
const { validatorModuleSource } = await import(new URL('dist/method/schema-codegen.js', root).href);
const { PRECOMPILED_FILE } = await import(new URL('dist/method/schema-validator.js', root).href);

const schemaText = readFileSync(new URL('templates/method.schema.json', root), 'utf8');
writeFileSync(fileURLToPath(new URL(`dist/method/${PRECOMPILED_FILE}`, root)), validatorModuleSource(schemaText));
