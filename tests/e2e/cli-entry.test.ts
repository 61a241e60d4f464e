/**
 * The built entry (dist/cli.js, from scripts/cli-entry.mjs) runs the bundle
 * through V8's code cache written at build time. The cache may only make a run
 * faster: with a cache V8 refuses, a cache of another build or none, the same
 * run writes the same files.
 */
import { copyFileSync, mkdirSync, readFileSync, readdirSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import vm from 'node:vm';
import { afterAll, describe, expect, it } from 'vitest';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';

const DIST = join(ROOT, 'dist');
const BUNDLE = join(DIST, 'cli-bundle.js');
const CACHE = join(DIST, 'cli-bundle.cache');
const work = tempDir('phasebook-entry-');
afterAll(() => rmSync(work, { recursive: true, force: true }));

/**
 * A copy of the install in which only the cache differs: dist/cli.js copied,
 * everything else linked to the real files.
 */
function installWithCache(name: string, cache: Buffer | undefined): string {
  const root = join(work, name);
  mkdirSync(join(root, 'dist'), { recursive: true });
  for (const entry of ['templates', 'package.json', 'node_modules']) symlinkSync(join(ROOT, entry), join(root, entry));
  for (const entry of readdirSync(DIST)) {
    if (entry === 'cli.js' || entry === 'cli-bundle.cache') continue;
    symlinkSync(join(DIST, entry), join(root, 'dist', entry));
  }
  copyFileSync(join(DIST, 'cli.js'), join(root, 'dist', 'cli.js'));
  if (cache) writeFileSync(join(root, 'dist', 'cli-bundle.cache'), cache);
  return root;
}

/** The demo through an install; the results CSV and the process's exit and stderr. */
function demo(root: string) {
  const out = join(work, `out-${root.split('/').pop()}`);
  const args = ['recalc', join(ROOT, 'samples', 'kestrel-brook-2026-11.csv'), '--method', join(ROOT, 'templates', 'surface-water.yaml')];
  const r = runCli([...args, '--out', out, '--outputs', 'csv', '--quiet'], { cli: join(root, 'dist', 'cli.js') });
  return { code: r.code, stderr: r.stderr, csv: readFileSync(join(out, 'kestrel-brook-2026-11.results.csv'), 'utf8') };
}

describe('the built entry and its code cache', () => {
  const source = readFileSync(BUNDLE, 'latin1');
  const cache = readFileSync(CACHE);
  const buildId = source.slice(3, 67);
  let reference: ReturnType<typeof demo> | undefined;

  it('the build wrote a cache of this very bundle, which V8 here accepts', () => {
    expect(source.startsWith(`// ${buildId}\n`)).toBe(true);
    expect(buildId).toMatch(/^[0-9a-f]{64}$/);
    expect(cache.toString('latin1', 0, 64)).toBe(buildId);
    const script = new vm.Script(source, { filename: BUNDLE, cachedData: cache.subarray(64) });
    expect(script.cachedDataRejected).toBe(false);
  });

  it('the bundle is ASCII, so reading it as Latin-1 gives the same text as UTF-8', () => {
    expect(/[^\x00-\x7f]/.test(source)).toBe(false);
    expect(readFileSync(BUNDLE, 'utf8')).toBe(source);
  });

  it.each([
    ['no cache', undefined],
    ['a cache of another build', Buffer.concat([Buffer.from('0'.repeat(64), 'latin1'), cache.subarray(64)])],
    ['a damaged cache of this build', Buffer.concat([cache.subarray(0, 64), Buffer.alloc(4096, 0x5a)])],
    ['a cache cut short', cache.subarray(0, 40)],
  ])('with %s, the demo gives the same results as with the build\'s cache', (name, other) => {
    reference ??= demo(installWithCache('built', cache));
    const run = demo(installWithCache(name.replaceAll(' ', '-'), other));
    expect(reference.code).toBe(0);
    expect(run.code).toBe(0);
    expect(run.stderr).toBe(reference.stderr);
    expect(run.csv).toBe(reference.csv);
    expect(run.csv.split('\n').length).toBeGreaterThan(40); // the demo's 44 rows, header and all
  });
});
