import { rmSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { StopError } from '../../src/errors.js';
import { listMethods, resolveMethod, SHIPPED_METHODS } from '../../src/method/find.js';
import { methodFolders } from '../helpers/method-folders.js';

const { dir, lab, other, env } = methodFolders();
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('resolveMethod', () => {
  it.each([
    ['a shipped method by name', 'generic-lle', {}, join(SHIPPED_METHODS, 'generic-lle.yaml')],
    ['a shipped method by name with its extension', 'generic-lle.yaml', {}, join(SHIPPED_METHODS, 'generic-lle.yaml')],
    ["a lab's method by name", 'river-pesticides', env, join(lab, 'river-pesticides.yaml')],
    ["a lab's method that reuses a shipped name, on purpose", 'surface-water', env, join(lab, 'surface-water.yml')],
    ['an existing file, whatever the folders say', 'templates/generic-lle.yaml', env, 'templates/generic-lle.yaml'],
    ['a path that does not exist (the loader says so, with the path)', 'nowhere/m.yaml', {}, 'nowhere/m.yaml'],
  ])('finds %s', (_name, value, e, file) => {
    expect(resolveMethod(value, e)).toBe(file);
  });

  it('names the methods there are when a name is unknown', () => {
    try {
      resolveMethod('river', env);
      throw new Error('expected a StopError');
    } catch (err) {
      expect(err).toBeInstanceOf(StopError);
      expect((err as StopError).describe()).toBe(
        'river: is neither a file nor the name of a method; the methods by name are "river-pesticides", "surface-water", "fruit-juice", ' +
          '"generic-lle", "plasma-amitriptyline" (phasebook method list shows them; PHASEBOOK_METHODS adds a folder of your own)',
      );
    }
  });
});

describe('listMethods', () => {
  it('lists the lab folders first, then the shipped methods, each name once, with titles', () => {
    expect(listMethods(env).map((m) => [m.name, m.title, m.source])).toEqual([
      ['river-pesticides', 'River pesticides (invented lab)', 'PHASEBOOK_METHODS'],
      ['surface-water', "The lab's own surface-water method", 'PHASEBOOK_METHODS'],
      ['fruit-juice', 'Benzoic and sorbic acid in fruit drinks by acidic LLE (Elderwick Food Laboratory, demo)', 'shipped'],
      ['generic-lle', 'Generic liquid-liquid extraction', 'shipped'],
      ['plasma-amitriptyline', 'Amitriptyline and nortriptyline in plasma by alkaline LLE (Tarnmoor Clinical Bioanalysis, demo)', 'shipped'],
    ]);
  });
});
