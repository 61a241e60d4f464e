import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { parse } from 'yaml';
import { describe, expect, it } from 'vitest';

const ROOT = join(import.meta.dirname, '../..');
const schema = JSON.parse(readFileSync(join(ROOT, 'templates/method.schema.json'), 'utf8')) as Schema;

interface Schema {
  description?: string;
  $ref?: string;
  properties?: Record<string, Schema>;
  additionalProperties?: Schema | boolean;
  items?: Schema;
  propertyNames?: Schema;
  definitions?: Record<string, Schema>;
}

/** Every place an editor can stand in a method file, with its schema node. */
function schemaNodes(node: Schema, path: string, out: Array<[string, Schema]>): Array<[string, Schema]> {
  out.push([path, node]);
  for (const [k, v] of Object.entries(node.properties ?? {})) schemaNodes(v, `${path}.${k}`, out);
  if (node.additionalProperties && typeof node.additionalProperties === 'object') schemaNodes(node.additionalProperties, `${path}.*`, out);
  if (node.items) schemaNodes(node.items, `${path}[]`, out);
  if (node.propertyNames) schemaNodes(node.propertyNames, `${path}<key>`, out);
  return out;
}

const resolve = (node: Schema): Schema => (node.$ref ? schema.definitions![node.$ref.replace('#/definitions/', '')]! : node);

describe('method.schema.json gives help on every key', () => {
  const nodes = schemaNodes(schema, '#', []);
  for (const [name, def] of Object.entries(schema.definitions ?? {})) schemaNodes(def, `definitions.${name}`, nodes);

  it('has a description on every property, map value, array item and key name', () => {
    const missing = nodes.filter(([, n]) => !n.description).map(([p]) => p);
    expect(missing).toEqual([]);
  });

  it('describes every key the shipped methods use', () => {
    const templates = readdirSync(join(ROOT, 'templates')).filter((f) => f.endsWith('.yaml'));
    expect(templates.length).toBeGreaterThanOrEqual(4);
    for (const file of templates) {
      const data = parse(readFileSync(join(ROOT, 'templates', file), 'utf8')) as unknown;
      const walk = (value: unknown, node: Schema, path: string): void => {
        const n = resolve(node);
        expect(n.description, `${file}: ${path}`).toBeTruthy();
        if (Array.isArray(value)) value.forEach((v, i) => n.items && walk(v, n.items, `${path}[${i}]`));
        else if (value && typeof value === 'object') {
          for (const [k, v] of Object.entries(value)) {
            const child = n.properties?.[k] ?? (typeof n.additionalProperties === 'object' ? n.additionalProperties : undefined);
            expect(child, `${file}: ${path}.${k} is not in the schema`).toBeDefined();
            walk(v, child!, `${path}.${k}`);
          }
        }
      };
      walk(data, schema, '#');
    }
  });
});
