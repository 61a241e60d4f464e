// Build step (after tsc): bundle the command line into dist/cli-bundle.js and
// put the entry scripts/cli-entry.mjs at dist/cli.js (replacing tsc's), then
// run the demo once to keep V8's compiled code in dist/cli-bundle.cache.
//
// Why: start-up. Resolving and compiling some thousand files (our modules, the
// dependencies' own, @stdlib's 350 small packages) cost more than the work of a
// small worklist; so did parsing and compiling the one bundle on every run,
// which the code cache spares (scripts/cli-entry.mjs says how it is checked).
// The library entry (dist/index.js) stays tsc's output.
//
// The bundle is CommonJS, wrapped as Node wraps a module (V8 caches code of a
// script, not of an ES module, on Node 20). What stays as it is in the sources:
// - a dynamic `import()` inside the bundle runs its module when first needed
//   (exceljs, vega, the workbook checker are evaluated only by runs that use them);
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
import { chmod, mkdir, mkdtemp, readFile, rename, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { dirname, join, relative, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = resolve(fileURLToPath(new URL('..', import.meta.url)));
const SRC = join(ROOT, 'src');
/** `PHASEBOOK_BUNDLE_OUT` puts the bundle elsewhere (for comparing builds); default dist/. */
const OUT = resolve(process.env.PHASEBOOK_BUNDLE_OUT ?? join(ROOT, 'dist'));
const BUNDLE = join(OUT, 'cli-bundle.js');
/** The bundle's parameter holding the URL of dist/ (see scripts/cli-entry.mjs). */
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

const REQUIRE_LINE = /^const require = createRequire\(import\.meta\.url\);$/m;

const sources = {
  name: 'phasebook-sources',
  setup(build) {
    build.onLoad({ filter: /\.ts$/ }, async (args) => {
      if (!args.path.startsWith(SRC + sep)) return undefined;
      const builtAs = relative(SRC, args.path).split(sep).join('/').replace(/\.ts$/, '.js');
      const text = (await readFile(args.path, 'utf8'))
        .replace(REQUIRE_LINE, '')
        .replaceAll('import.meta.url', `new URL(${JSON.stringify('./' + builtAs)}, ${DIST_URL}).href`);
      return { contents: text, loader: 'ts' };
    });
  },
};

const result = await esbuild.build({
  entryPoints: [join(SRC, 'cli.ts')],
  outfile: BUNDLE,
  bundle: true,
  format: 'cjs',
  platform: 'node',
  target: 'node20',
  external: ['better-sqlite3'],
  plugins: [sources, noCanvas],
  // Without comments and indentation the file is a third smaller, and with
  // every character ASCII (esbuild escapes the others) the entry reads it as
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
if (dynamic.length > 0) throw new Error(`the bundle must not import() at run time: ${dynamic.map((i) => i.path).join(', ')}`);

// The body without tsc's shebang line, wrapped; the first line names the build.
const body = result.outputFiles[0].text.replace(/^#!.*\n/, '');
const wrapped = `(function (exports, require, module, __filename, __dirname, ${DIST_URL}) {\n${body}\n})`;
const nonAscii = /[^\x00-\x7f]/.exec(wrapped);
if (nonAscii) {
  // esbuild leaves regular expressions and template literals as written: spell such characters with \u escapes.
  throw new Error(`the bundle must be ASCII (the entry reads it as Latin-1); found ${JSON.stringify(nonAscii[0])} in "${wrapped.slice(Math.max(0, nonAscii.index - 60), nonAscii.index + 20)}"`);
}
const buildId = createHash('sha256').update(wrapped).digest('hex');
await rm(join(OUT, 'cli-chunks'), { recursive: true, force: true }); // an earlier build's layout
await writeAtomically(BUNDLE, `// ${buildId}\n${wrapped}`);
// The entry last: a dist/cli.js never runs a half-written bundle.
await writeAtomically(join(OUT, 'cli.js'), await readFile(join(ROOT, 'scripts', 'cli-entry.mjs'), 'utf8'));
await chmod(join(OUT, 'cli.js'), 0o755);
await writeCodeCache();

/** Run the demo with every output through the new entry, which then writes the code cache. */
async function writeCodeCache() {
  const cache = join(OUT, 'cli-bundle.cache');
  await rm(cache, { force: true });
  const work = await mkdtemp(join(tmpdir(), 'phasebook-build-'));
  try {
    const demo = ['recalc', join(ROOT, 'samples', 'kestrel-brook-2026-11.csv'), '--method', join(ROOT, 'templates', 'surface-water.yaml')];
    const run = spawnSync(process.execPath, [join(OUT, 'cli.js'), ...demo, '--out', work, '--quiet', '--outputs', 'csv,xlsx,html'], {
      env: { ...process.env, PHASEBOOK_WRITE_CODE_CACHE: cache },
      encoding: 'utf8',
    });
    // The demo batch passes (exit 0); a QC failure (1) would still have run every part.
    if (run.status !== 0 && run.status !== 1) throw new Error(`the demo run for the code cache failed (exit ${run.status}):\n${run.stderr}`);
  } finally {
    await rm(work, { recursive: true, force: true });
  }
}

async function writeAtomically(path, text) {
  await mkdir(dirname(path), { recursive: true });
  await writeFile(`${path}.tmp`, text);
  await rename(`${path}.tmp`, path);
}
