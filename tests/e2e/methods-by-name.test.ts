import { rmSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { runCli } from '../helpers/cli.js';
import { methodFolders } from '../helpers/method-folders.js';

/** Methods by name through the built CLI (resolving names is tested in tests/method/find.test.ts). */
const { dir, lab, env } = methodFolders();
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('through the built CLI, from another folder', () => {
  it('recalc -m NAME finds the shipped method', () => {
    const out = join(dir, 'out');
    const r = runCli(['recalc', join(process.cwd(), 'samples/kestrel-brook-2026-11.csv'), '-m', 'surface-water', '-o', out, '--outputs', 'csv'], { cwd: dir });
    expect(r.code).toBe(0);
    expect(r.stderr).toContain('with method surface-water;');
  });

  it('method list prints the names and titles on stdout', () => {
    const r = runCli(['method', 'list'], { cwd: dir, env });
    expect(r.code).toBe(0);
    expect(r.stdout.split('\n')[0]).toBe('river-pesticides      River pesticides (invented lab)  [' + join(lab, 'river-pesticides.yaml') + ']');
    expect(r.stdout).toContain('generic-lle           Generic liquid-liquid extraction\n');
  });
});
