/**
 * The built entries run the bundles through V8's code caches written at build
 * time: dist/cli.js the command line (dist/cli-bundle.js), and the chart worker
 * it starts, dist/chart-worker.js, the chart drawing (dist/chart-bundle.js).
 * The caches and the worker may only make a run faster: with a cache V8
 * refuses, a cache of another build or none, or a chart worker that cannot
 * run, the same run writes the same files.
 */
import { copyFileSync, mkdirSync, readFileSync, readdirSync, rmSync, symlinkSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import vm from 'node:vm';
import { afterAll, describe, expect, it } from 'vitest';
import { CHART_WORKER_DATA } from '../../src/report/chart-protocol.js';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';

const DIST = join(ROOT, 'dist');
const BUNDLES = ['cli-bundle', 'chart-bundle'] as const;
const ENTRIES = ['cli.js', 'chart-worker.js'];
const work = tempDir('phasebook-entry-');
afterAll(() => rmSync(work, { recursive: true, force: true }));

/**
 * A copy of the install in which only `files` of dist/ differ (undefined: no such
 * file): the entries copied (they find the bundles next to themselves), every
 * other file linked to the real one.
 */
function install(name: string, files: Record<string, Buffer | string | undefined>): string {
  const root = join(work, name);
  mkdirSync(join(root, 'dist'), { recursive: true });
  for (const entry of ['templates', 'package.json', 'node_modules']) symlinkSync(join(ROOT, entry), join(root, entry));
  for (const entry of readdirSync(DIST)) {
    if (entry in files) continue;
    if (ENTRIES.includes(entry)) copyFileSync(join(DIST, entry), join(root, 'dist', entry));
    else symlinkSync(join(DIST, entry), join(root, 'dist', entry));
  }
  for (const [entry, content] of Object.entries(files)) if (content !== undefined) writeFileSync(join(root, 'dist', entry), content);
  return root;
}

/** The demo through an install: its results CSV and report, exit code and stderr. */
function demo(root: string) {
  const out = join(work, `out-${root.split('/').pop()}`);
  const args = ['recalc', join(ROOT, 'samples', 'kestrel-brook-2026-11.csv'), '--method', join(ROOT, 'templates', 'surface-water.yaml')];
  const r = runCli([...args, '--out', out, '--outputs', 'csv,html', '--quiet', '--timestamp', '2026-11-30T12:00:00Z'], { cli: join(root, 'dist', 'cli.js') });
  const report = readdirSync(out).find((f) => f.endsWith('.report.html'));
  return {
    code: r.code,
    stderr: r.stderr,
    csv: readFileSync(join(out, 'kestrel-brook-2026-11.results.csv'), 'utf8'),
    report: report === undefined ? '' : readFileSync(join(out, report), 'utf8'),
  };
}

describe('the built entries and their code caches', () => {
  const sources = Object.fromEntries(BUNDLES.map((b) => [b, readFileSync(join(DIST, `${b}.js`), 'latin1')]));
  const caches = Object.fromEntries(BUNDLES.map((b) => [b, readFileSync(join(DIST, `${b}.cache`))]));
  let reference: ReturnType<typeof demo> | undefined;

  it.each(BUNDLES)('the build wrote a cache of this very %s, which V8 here accepts', (bundle) => {
    const source = sources[bundle]!;
    const cache = caches[bundle]!;
    const buildId = source.slice(3, 67);
    expect(source.startsWith(`// ${buildId}\n`)).toBe(true);
    expect(buildId).toMatch(/^[0-9a-f]{64}$/);
    expect(cache.toString('latin1', 0, 64)).toBe(buildId);
    const script = new vm.Script(source, { filename: join(DIST, `${bundle}.js`), cachedData: cache.subarray(64) });
    expect(script.cachedDataRejected).toBe(false);
  });

  it.each(BUNDLES)('%s is ASCII, so reading it as Latin-1 gives the same text as UTF-8', (bundle) => {
    expect(/[^\x00-\x7f]/.test(sources[bundle]!)).toBe(false);
    expect(readFileSync(join(DIST, `${bundle}.js`), 'utf8')).toBe(sources[bundle]);
  });

  it("the command line's bundle holds no vega (the chart bundle does), and the entry starts the worker with its workerData", () => {
    expect(sources['cli-bundle']).not.toMatch(/node_modules\/vega/);
    expect(sources['chart-bundle']).toMatch(/node_modules\/vega-lite\//);
    expect(readFileSync(join(DIST, 'cli.js'), 'utf8')).toContain(`workerData: '${CHART_WORKER_DATA}'`);
  });

  const otherBuild = (b: (typeof BUNDLES)[number]) => Buffer.concat([Buffer.from('0'.repeat(64), 'latin1'), caches[b]!.subarray(64)]);
  const damaged = (b: (typeof BUNDLES)[number]) => Buffer.concat([caches[b]!.subarray(0, 64), Buffer.alloc(4096, 0x5a)]);
  it.each([
    ['no caches', { 'cli-bundle.cache': undefined, 'chart-bundle.cache': undefined }],
    ['caches of another build', { 'cli-bundle.cache': otherBuild('cli-bundle'), 'chart-bundle.cache': otherBuild('chart-bundle') }],
    ['damaged caches of this build', { 'cli-bundle.cache': damaged('cli-bundle'), 'chart-bundle.cache': damaged('chart-bundle') }],
    ['caches cut short', { 'cli-bundle.cache': caches['cli-bundle']!.subarray(0, 40), 'chart-bundle.cache': caches['chart-bundle']!.subarray(0, 40) }],
    ['a chart worker that fails as it starts', { 'chart-worker.js': "throw new Error('no worker here');\n" }],
    ['a chart worker that stops when asked to draw', { 'chart-worker.js': "import { parentPort } from 'node:worker_threads';\nparentPort.on('message', () => process.exit(3));\n" }],
  ])("with %s, the demo gives the same results and report as with the build's", (name, files) => {
    reference ??= demo(install('built', {}));
    const run = demo(install(name.replaceAll(' ', '-'), files));
    expect(reference.code).toBe(0);
    expect(run.code).toBe(0);
    expect(run.stderr).toBe(reference.stderr);
    expect(run.csv).toBe(reference.csv);
    expect(run.csv.split('\n').length).toBeGreaterThan(40); // the demo's 44 rows, header and all
    expect(run.report).toBe(reference.report);
    expect(run.report).toMatch(/<svg/);
  });
});
