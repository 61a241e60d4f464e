/**
 * The built entry dist/cli.js runs the command line's bundle (dist/cli-bundle.js)
 * and, when a report is drawn, the chart bundle (dist/chart-bundle.js), keeping
 * V8's compiled code for each in the user's cache folder (scripts/bundle-loader.mjs).
 * The cache may only make a run faster: the first run writes it, later runs use
 * it, and with a cache V8 refuses, a cache of another build, a damaged or cut
 * short one, a folder that cannot be written or the cache turned off, the same
 * run writes the same files, and a bad cache is replaced by a good one.
 */
import { chmodSync, mkdirSync, readFileSync, readdirSync, rmSync, statSync, utimesSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import vm from 'node:vm';
import { afterAll, describe, expect, it } from 'vitest';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';

const DIST = join(ROOT, 'dist');
const BUNDLES = ['cli-bundle', 'chart-bundle'] as const;
type Bundle = (typeof BUNDLES)[number];
const work = tempDir('phasebook-entry-');
afterAll(() => rmSync(work, { recursive: true, force: true }));

const sources = Object.fromEntries(BUNDLES.map((b) => [b, readFileSync(join(DIST, `${b}.js`), 'latin1')])) as Record<Bundle, string>;
const buildIdOf = (b: Bundle) => sources[b].slice(3, 67);

let runs = 0;
/** The demo with the results CSV and the report, with `env`: its outputs, exit code and stderr. */
function demo(env: NodeJS.ProcessEnv) {
  const out = join(work, `out-${runs++}`);
  const args = ['recalc', join(ROOT, 'samples', 'kestrel-brook-2026-11.csv'), '--method', join(ROOT, 'templates', 'surface-water.yaml')];
  const r = runCli([...args, '--out', out, '--outputs', 'csv,html', '--quiet', '--timestamp', '2026-11-30T12:00:00Z'], { env });
  const report = readdirSync(out).find((f) => f.endsWith('.report.html'));
  return {
    code: r.code,
    stderr: r.stderr,
    csv: readFileSync(join(out, 'kestrel-brook-2026-11.results.csv'), 'utf8'),
    report: report === undefined ? '' : readFileSync(join(out, report), 'utf8'),
  };
}

/** The cache files in `dir`, by bundle (at most one each is expected here). */
function cachesIn(dir: string): Partial<Record<Bundle, string>> {
  const found: Partial<Record<Bundle, string>> = {};
  let names: string[] = [];
  try {
    names = readdirSync(dir);
  } catch {
    return found;
  }
  for (const name of names) {
    const bundle = BUNDLES.find((b) => new RegExp(`^${b}-[0-9a-f]{16}\\.cache$`).test(name));
    if (bundle === undefined) continue;
    expect(found[bundle], `two caches of ${bundle} in ${dir}`).toBeUndefined();
    found[bundle] = join(dir, name);
  }
  return found;
}

/** Whether V8 here takes `file` in as compiled code of `bundle`, made from this build. */
function accepted(bundle: Bundle, file: string): boolean {
  const bytes = readFileSync(file);
  if (bytes.toString('latin1', 0, 64) !== buildIdOf(bundle)) return false;
  const script = new vm.Script(sources[bundle], { filename: join(DIST, `${bundle}.js`), cachedData: bytes.subarray(64) });
  return script.cachedDataRejected === false;
}

describe("the command line's code cache", () => {
  const reference = demo({ PHASEBOOK_CODE_CACHE: 'off' });

  it('the reference run is the demo: it passes, with every row and a chart', () => {
    expect(reference.code).toBe(0);
    expect(reference.csv.split('\n').length).toBeGreaterThan(40); // the demo's 44 rows, header and all
    expect(reference.report).toMatch(/<svg/);
  });

  it('nothing of it is built: dist/ holds no cache, and the bundles start with their build id', () => {
    expect(readdirSync(DIST).filter((f) => f.endsWith('.cache'))).toEqual([]);
    for (const b of BUNDLES) {
      expect(buildIdOf(b)).toMatch(/^[0-9a-f]{64}$/);
      expect(sources[b].startsWith(`// ${buildIdOf(b)}\n`)).toBe(true);
    }
  });

  it.each(BUNDLES)('%s is ASCII, so reading it as Latin-1 gives the same text as UTF-8', (bundle) => {
    expect(/[^\x00-\x7f]/.test(sources[bundle])).toBe(false);
    expect(readFileSync(join(DIST, `${bundle}.js`), 'utf8')).toBe(sources[bundle]);
  });

  it("the command line's bundle holds no vega (the chart bundle does)", () => {
    expect(sources['cli-bundle']).not.toMatch(/node_modules\/vega/);
    expect(sources['chart-bundle']).toMatch(/node_modules\/vega-lite\//);
  });

  it('the first run writes a cache V8 accepts for each bundle it ran, later runs use it and leave it, and the outputs are the same', () => {
    const dir = join(work, 'cache-first');
    const first = demo({ PHASEBOOK_CACHE_DIR: dir });
    expect(first).toEqual(reference);
    const caches = cachesIn(dir);
    for (const b of BUNDLES) {
      expect(caches[b], b).toBeDefined();
      expect(accepted(b, caches[b]!), b).toBe(true);
    }
    const before = BUNDLES.map((b) => statSync(caches[b]!).mtimeMs);
    expect(demo({ PHASEBOOK_CACHE_DIR: dir })).toEqual(reference);
    expect(cachesIn(dir)).toEqual(caches);
    expect(BUNDLES.map((b) => statSync(caches[b]!).mtimeMs)).toEqual(before);
  });

  it('a run without a report runs no chart bundle, so it caches none', () => {
    const dir = join(work, 'cache-csv');
    const r = runCli(['recalc', join(ROOT, 'samples', 'kestrel-brook-2026-11.csv'), '-m', 'surface-water', '-o', join(work, 'out-csv'), '--outputs', 'csv', '--quiet'], {
      env: { PHASEBOOK_CACHE_DIR: dir },
    });
    expect(r.code).toBe(0);
    expect(Object.keys(cachesIn(dir))).toEqual(['cli-bundle']);
  });

  it('a cache of other flags, on the command line or in NODE_OPTIONS, is another file: all stay', () => {
    const dir = join(work, 'cache-flags');
    demo({ PHASEBOOK_CACHE_DIR: dir });
    const plain = cachesIn(dir)['cli-bundle']!;
    expect(runCli(['--version'], { env: { PHASEBOOK_CACHE_DIR: dir }, nodeArgs: ['--stack-size=2000'] }).code).toBe(0);
    expect(runCli(['--version'], { env: { PHASEBOOK_CACHE_DIR: dir, NODE_OPTIONS: '--max-old-space-size=3000' } }).code).toBe(0);
    const names = readdirSync(dir).filter((f) => f.startsWith('cli-bundle-'));
    expect(names).toHaveLength(3);
    expect(names).toContain(plain.split('/').pop());
  });

  const good = (() => {
    const dir = join(work, 'cache-good');
    demo({ PHASEBOOK_CACHE_DIR: dir });
    const caches = cachesIn(dir);
    return { names: Object.fromEntries(BUNDLES.map((b) => [b, caches[b]!.split('/').pop()!])) as Record<Bundle, string>, bytes: Object.fromEntries(BUNDLES.map((b) => [b, readFileSync(caches[b]!)])) as Record<Bundle, Buffer> };
  })();
  const otherBuild = (b: Bundle) => Buffer.concat([Buffer.from('0'.repeat(64), 'latin1'), good.bytes[b].subarray(64)]);
  const damaged = (b: Bundle) => Buffer.concat([good.bytes[b].subarray(0, 64), Buffer.alloc(4096, 0x5a)]);
  const cutShort = (b: Bundle) => good.bytes[b].subarray(0, 40);

  it.each([
    ['caches of another build', otherBuild],
    ['damaged caches of this build', damaged],
    ['caches cut short', cutShort],
  ] as const)('with %s, the demo gives the same outputs, and the caches are written anew', (name, make) => {
    const dir = join(work, `cache-${name.replaceAll(' ', '-')}`);
    mkdirSync(dir, { recursive: true });
    for (const b of BUNDLES) writeFileSync(join(dir, good.names[b]), make(b));
    expect(demo({ PHASEBOOK_CACHE_DIR: dir })).toEqual(reference);
    for (const b of BUNDLES) expect(accepted(b, join(dir, good.names[b])), b).toBe(true);
  });

  it.each([
    ['the cache turned off', (dir: string) => ({ PHASEBOOK_CACHE_DIR: dir, PHASEBOOK_CODE_CACHE: 'off' })],
    ['a cache folder that is a file', (dir: string) => (writeFileSync(dir, 'not a folder'), { PHASEBOOK_CACHE_DIR: dir })],
    ['a cache folder given as a relative path', () => ({ PHASEBOOK_CACHE_DIR: 'relative/cache' })],
  ] as const)('with %s, the demo gives the same outputs and writes no cache', (name, env) => {
    const dir = join(work, `cache-${name.replaceAll(' ', '-')}`);
    expect(demo(env(dir))).toEqual(reference);
    expect(cachesIn(dir)).toEqual({});
    expect(cachesIn(join(ROOT, 'relative', 'cache'))).toEqual({});
  });

  it.skipIf(process.getuid?.() === 0)('with a cache folder it may not write to, the demo gives the same outputs', () => {
    const dir = join(work, 'cache-read-only');
    mkdirSync(dir);
    chmodSync(dir, 0o500);
    try {
      expect(demo({ PHASEBOOK_CACHE_DIR: dir })).toEqual(reference);
      expect(readdirSync(dir)).toEqual([]);
    } finally {
      chmodSync(dir, 0o700);
    }
  });

  it('keeps the newest four caches of a bundle, so that old builds and Node versions do not pile up', () => {
    const dir = join(work, 'cache-prune');
    mkdirSync(dir);
    const old = ['0000000000000001', '0000000000000002', '0000000000000003', '0000000000000004', '0000000000000005'].map((k) => `cli-bundle-${k}.cache`);
    old.forEach((name, i) => {
      writeFileSync(join(dir, name), 'stale');
      const t = new Date(Date.UTC(2026, 0, 1 + i));
      utimesSync(join(dir, name), t, t);
    });
    writeFileSync(join(dir, 'chart-bundle-0000000000000009.cache'), 'stale');
    utimesSync(join(dir, 'chart-bundle-0000000000000009.cache'), new Date(Date.UTC(2025, 0, 1)), new Date(Date.UTC(2025, 0, 1)));
    const r = runCli(['recalc', join(ROOT, 'samples', 'kestrel-brook-2026-11.csv'), '-m', 'surface-water', '-o', join(work, 'out-prune'), '--outputs', 'csv', '--quiet'], {
      env: { PHASEBOOK_CACHE_DIR: dir },
    });
    expect(r.code).toBe(0);
    const left = readdirSync(dir).sort();
    // The new cache and the three newest old ones of the command line's bundle; the chart bundle's is not its to prune.
    expect(left.filter((f) => f.startsWith('cli-bundle-'))).toHaveLength(4);
    expect(left).toEqual(expect.arrayContaining([old[2], old[3], old[4], 'chart-bundle-0000000000000009.cache']));
    expect(left).not.toContain(old[0]);
    expect(left).not.toContain(old[1]);
  });
});

