// Build step (after tsc): bundle the command line into two files and run the
// demo once to keep V8's compiled code for each:
// - dist/cli-bundle.js: the command line, run by the entry dist/cli.js
//   (scripts/cli-entry.mjs, replacing tsc's), code cache dist/cli-bundle.cache;
// - dist/chart-bundle.js: the report's chart drawing (src/report/chart-worker.ts,
//   vega and vega-lite), run by dist/chart-worker.js (scripts/chart-worker-entry.mjs)
//   on a worker thread, code cache dist/chart-bundle.cache. The command line's
//   bundle holds no vega: src/report/chart-code.ts is replaced there by a version
//   that finds the worker's entry in dist/ and, to draw on the main thread when no
//   worker runs, loads the chart bundle.
// Both run through scripts/bundle-loader.mjs (dist/bundle-loader.js), which says
// how a cache is checked.
//
// Why: start-up. Resolving and compiling some thousand files (our modules, the
// dependencies' own, @stdlib's 350 small packages) cost more than the work of a
// small worklist; so did parsing and compiling the one bundle on every run,
// which the code cache spares. The library entry (dist/index.js) stays tsc's output.
//
// A bundle is CommonJS, wrapped as Node wraps a module (V8 caches code of a
// script, not of an ES module, on Node 20). What stays as it is in the sources:
// - a dynamic `import()` of a bundled module runs that module when first needed
//   (exceljs and the workbook checker are evaluated only by runs that use them);
// - better-sqlite3 (a native addon, optional) is required from node_modules;
// - a file a module finds next to itself through `import.meta.url` (templates,
//   package.json, the precompiled method validator) is found as from the module's
//   tsc-built copy in dist/, so the paths in the sources hold in the bundle too.
// What the bundle changes:
// - a module-level `const require = createRequire(import.meta.url)` is dropped, so
//   the packages it requires (mathjs's single file, @stdlib's t quantile) are
//   bundled like the rest; they still load when first required;
// - vega-canvas is replaced by what it is when the optional `canvas` package is
//   absent (no canvas: vega estimates text widths). Its Node build looks for
//   `canvas` with a top-level await, which CommonJS cannot hold; and charts then
//   come out the same whatever else is installed.
import * as esbuild from 'esbuild';
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { chmod, mkdir, mkdtemp, readFile, rename, rm, stat, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { dirname, join, relative, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = resolve(fileURLToPath(new URL('..', import.meta.url)));
const SRC = join(ROOT, 'src');
/** `PHASEBOOK_BUNDLE_OUT` puts the bundles and entries elsewhere (for comparing builds); default dist/. */
const OUT = resolve(process.env.PHASEBOOK_BUNDLE_OUT ?? join(ROOT, 'dist'));
/** The bundle's parameter holding the URL of dist/ (see scripts/bundle-loader.mjs). */
const DIST_URL = '__phasebook_dist_url';

const noCanvas = {
  name: 'phasebook-no-canvas',
  setup(build) {
    build.onResolve({ filter: /^vega-canvas$/ }, () => ({ path: 'vega-canvas', namespace: 'phasebook-no-canvas' }));
    build.onLoad({ filter: /.*/, namespace: 'phasebook-no-canvas' }, () => ({
      contents: 'const none = () => null;\nexport { none as canvas, none as domCanvas, none as image, none as nodeCanvas };',
      loader: 'js',
    }));
  },
};

/** The bundle's parameters holding the loader's runBundle and what the entry hands over (scripts/bundle-loader.mjs). */
const RUN_BUNDLE = '__phasebook_run_bundle';
const HANDOVER = '__phasebook_handover';

// In the command line's bundle, the chart code is the chart bundle's, on a worker (maybe
// one the entry started) or loaded here.
const CHART_CODE = join(SRC, 'report', 'chart-code.ts');
const CHART_CODE_IN_BUNDLE = `
export const chartWorkerUrl = new URL('./chart-worker.js', ${DIST_URL});
export function loadChartModule() {
  return Promise.resolve(${RUN_BUNDLE}(${DIST_URL}, 'chart-bundle'));
}
let early = ${HANDOVER}.chartWorker;
export function takeEarlyChartWorker() {
  const worker = early;
  early = undefined;
  return worker;
}
`;

const REQUIRE_LINE = /^const require = createRequire\(import\.meta\.url\);$/m;

/** Our sources as tsc builds them, but for the module `replaced` (path → contents). */
const sources = (replaced) => ({
  name: 'phasebook-sources',
  setup(build) {
    build.onLoad({ filter: /\.ts$/ }, async (args) => {
      if (!args.path.startsWith(SRC + sep)) return undefined;
      if (replaced.has(args.path)) return { contents: replaced.get(args.path), loader: 'ts' };
      const builtAs = relative(SRC, args.path).split(sep).join('/').replace(/\.ts$/, '.js');
      const text = (await readFile(args.path, 'utf8'))
        .replace(REQUIRE_LINE, '')
        .replaceAll('import.meta.url', `new URL(${JSON.stringify('./' + builtAs)}, ${DIST_URL}).href`);
      return { contents: text, loader: 'ts' };
    });
  },
});

await rm(join(OUT, 'cli-chunks'), { recursive: true, force: true }); // an earlier build's layout
const cli = await bundle(join(SRC, 'cli.ts'), 'cli-bundle', new Map([[CHART_CODE, CHART_CODE_IN_BUNDLE]]));
const vegaInCli = Object.keys(cli.metafile.inputs).filter((p) => /node_modules\/vega/.test(p));
if (vegaInCli.length > 0) throw new Error(`the command line's bundle must not hold vega (it is the chart bundle's): ${vegaInCli[0]}`);
await bundle(join(SRC, 'report', 'chart-worker.ts'), 'chart-bundle', new Map());
// The entries last: an entry never runs a half-written bundle.
await writeAtomically(join(OUT, 'bundle-loader.js'), await readFile(join(ROOT, 'scripts', 'bundle-loader.mjs'), 'utf8'));
await writeAtomically(join(OUT, 'chart-worker.js'), await readFile(join(ROOT, 'scripts', 'chart-worker-entry.mjs'), 'utf8'));
await writeAtomically(join(OUT, 'cli.js'), await readFile(join(ROOT, 'scripts', 'cli-entry.mjs'), 'utf8'));
await chmod(join(OUT, 'cli.js'), 0o755);
await writeCodeCaches();

/** Bundle `entry` into `<OUT>/<name>.js`, wrapped, ASCII, its first line naming the build; returns esbuild's result. */
async function bundle(entry, name, replaced) {
  const result = await esbuild.build({
    entryPoints: [entry],
    bundle: true,
    format: 'cjs',
    platform: 'node',
    target: 'node20',
    external: ['better-sqlite3'],
    plugins: [sources(replaced), noCanvas],
    // Without comments and indentation the file is a third smaller, and with
    // every character ASCII (esbuild escapes the others) the loader reads it as
    // Latin-1, which costs half as much as decoding UTF-8.
    minifyWhitespace: true,
    charset: 'ascii',
    legalComments: 'none',
    logLevel: 'warning',
    metafile: true,
    write: false,
  });
  // A dynamic import() left in a script needs Node's experimental vm loader, which the code
  // cache does not keep: require a CommonJS package instead (src/history/store.ts does).
  const dynamic = Object.values(result.metafile.outputs).flatMap((o) => o.imports.filter((i) => i.kind === 'dynamic-import'));
  if (dynamic.length > 0) throw new Error(`${name} must not import() at run time: ${dynamic.map((i) => i.path).join(', ')}`);
  // The body without tsc's shebang line, wrapped; the first line names the build.
  const body = result.outputFiles[0].text.replace(/^#!.*\n/, '');
  const wrapped = `(function (exports, require, module, __filename, __dirname, ${DIST_URL}, ${RUN_BUNDLE}, ${HANDOVER}) {\n${body}\n})`;
  const nonAscii = /[^\x00-\x7f]/.exec(wrapped);
  if (nonAscii) {
    // esbuild leaves regular expressions and template literals as written: spell such characters with \u escapes.
    throw new Error(`${name} must be ASCII (the loader reads it as Latin-1); found ${JSON.stringify(nonAscii[0])} in "${wrapped.slice(Math.max(0, nonAscii.index - 60), nonAscii.index + 20)}"`);
  }
  const buildId = createHash('sha256').update(wrapped).digest('hex');
  await writeAtomically(join(OUT, `${name}.js`), `// ${buildId}\n${wrapped}`);
  return result;
}

/**
 * Run the demo with every output through the new entry, with PHASEBOOK_WRITE_CODE_CACHE
 * set: the main thread then writes dist/cli-bundle.cache, the chart worker dist/chart-bundle.cache.
 */
async function writeCodeCaches() {
  const caches = ['cli-bundle.cache', 'chart-bundle.cache'].map((name) => join(OUT, name));
  for (const cache of caches) await rm(cache, { force: true });
  const work = await mkdtemp(join(tmpdir(), 'phasebook-build-'));
  try {
    const demo = ['recalc', join(ROOT, 'samples', 'kestrel-brook-2026-11.csv'), '--method', join(ROOT, 'templates', 'surface-water.yaml')];
    const run = spawnSync(process.execPath, [join(OUT, 'cli.js'), ...demo, '--out', work, '--quiet', '--outputs', 'csv,xlsx,html'], {
      env: { ...process.env, PHASEBOOK_WRITE_CODE_CACHE: '1' },
      encoding: 'utf8',
    });
    // The demo batch passes (exit 0); a QC failure (1) would still have run every part.
    if (run.status !== 0 && run.status !== 1) throw new Error(`the demo run for the code cache failed (exit ${run.status}):\n${run.stderr}`);
    const missing = [];
    for (const cache of caches) {
      try {
        await stat(cache);
      } catch {
        missing.push(cache);
      }
    }
    if (missing.length > 0) throw new Error(`the demo run for the code cache wrote no ${missing.join(', ')}`);
  } finally {
    await rm(work, { recursive: true, force: true });
  }
}

async function writeAtomically(path, text) {
  await mkdir(dirname(path), { recursive: true });
  await writeFile(`${path}.tmp`, text);
  await rename(`${path}.tmp`, path);
}
