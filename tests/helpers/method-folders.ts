/**
 * Method folders as a lab keeps them, for the tests of methods by name (tests/method/find.test.ts and the
 * built CLI's e2e test): a lab folder, a missing folder and a second folder whose method the first shadows.
 */
import { mkdirSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { delimiter, join } from 'node:path';

export function methodFolders(): { dir: string; lab: string; other: string; env: { PHASEBOOK_METHODS: string } } {
  const dir = mkdtempSync(join(tmpdir(), 'phasebook-find-'));
  const lab = join(dir, 'lab');
  const other = join(dir, 'other');
  mkdirSync(lab);
  mkdirSync(other);
  const method = (name: string, title: string) => `name: ${name}\ntitle: "${title}"\nformulas:\n  - name: y\n    expr: extract_conc * 2\n`;
  writeFileSync(join(lab, 'river-pesticides.yaml'), method('river-pesticides', 'River pesticides (invented lab)'));
  writeFileSync(join(lab, 'surface-water.yml'), method('surface-water', "The lab's own surface-water method"));
  writeFileSync(join(other, 'river-pesticides.yaml'), method('river-pesticides', 'Shadowed by the first folder'));
  const env = { PHASEBOOK_METHODS: [lab, join(dir, 'missing-folder'), other].join(delimiter) };
  return { dir, lab, other, env };
}
