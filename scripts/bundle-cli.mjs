// Build step (after tsc): bundle the command line and the library:
// - dist/cli-bundle.js: the command line, run by the entry dist/cli.js
//   (scripts/cli-entry.mjs, replacing tsc's);
// - dist/chart-bundle.js: the report's chart drawing (src/report/svg.ts, vega and
//   vega-lite), loaded by the command line the first time a run draws a chart. The
//   command line's bundle holds no vega: src/report/chart-code.ts is replaced there
//   by a version that runs the chart bundle, so a run without a report neither
//   reads nor compiles vega;
// - dist/lib-bundle.js: the library (src/index.ts), with the same chart code, run by
//   dist/index.cjs (scripts/lib-entry.cjs, for `require`); dist/index.js (for
//   `import`, replacing tsc's) re-exports that one instance by name.
// All run through scripts/bundle-loader.mjs (built to dist/bundle-loader.cjs, so that
// the CommonJS entry loads it too): for the command line, it keeps V8's compiled code
// in the user's cache folder after the first run. Nothing the build writes depends
// on the machine that built it (no code cache ships).
// The method schema's precompiled validator gets ajv's helpers bundled into it, and
// dist/THIRD-PARTY-LICENSES collects the license notices of every bundled package.
//
// Why: start-up, and install weight. Resolving and compiling some thousand files
// (our modules, the dependencies' own, @stdlib's 350 small packages) cost more than
// the work of a small worklist; so did parsing and compiling the one bundle on
// every run, which the user's code cache spares from the second run on. And with
// the command line and the library bundled, nothing of node_modules is needed at
// run time but the optional better-sqlite3, so the packages bundled are
// devDependencies and a user's install is phasebook alone (docs/performance.md
// has the numbers).
//
// A bundle is CommonJS, wrapped as Node wraps a module (V8 caches code of a
// script, not of an ES module, on Node 20, which has no module.enableCompileCache).
// What stays as it is in the sources:
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
import { createHash } from 'node:crypto';
import { chmod, mkdir, readFile, readdir, rename, rm, writeFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
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

// exceljs's streaming workbook reader (ExcelJS.stream.xlsx.WorkbookReader) unzips with
// unzipper, whose dependency tree holds a package that declares no license (buffers 0.1.1),
// so it cannot be put into a bundle. phasebook does not use that reader: src/read/ has its
// own, and verify reads a workbook with ExcelJS.Workbook's reader, which unzips with jszip.
// Should a run ever reach it, it stops with this message.
const noUnzipper = {
  name: 'phasebook-no-unzipper',
  setup(build) {
    build.onResolve({ filter: /^unzipper$/ }, () => ({ path: 'unzipper', namespace: 'phasebook-no-unzipper' }));
    build.onLoad({ filter: /.*/, namespace: 'phasebook-no-unzipper' }, () => ({
      contents: "exports.Parse = () => { throw new Error(\"phasebook's build has no exceljs streaming workbook reader (unzipper is left out)\"); };",
      loader: 'js',
    }));
  },
};

/** The bundle's parameter holding the loader's way to run another bundle (scripts/bundle-loader.mjs). */
const RUN_BUNDLE = '__phasebook_run_bundle';

// In the command line's and the library's bundles, the chart code is the chart bundle, run
// (once: the module keeps it) when the first chart is drawn.
const CHART_CODE = join(SRC, 'report', 'chart-code.ts');
const CHART_CODE_IN_BUNDLE = `
let chartModule;
export function loadChartModule() {
  chartModule ??= ${RUN_BUNDLE}(${DIST_URL}, 'chart-bundle');
  return Promise.resolve(chartModule);
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
for (const old of ['bundle-loader.js', 'chart-worker.js', 'cli-bundle.cache', 'chart-bundle.cache']) await rm(join(OUT, old), { force: true }); // earlier builds' files
const withChartBundle = new Map([[CHART_CODE, CHART_CODE_IN_BUNDLE]]);
const cli = await bundle(join(SRC, 'cli.ts'), 'cli-bundle', withChartBundle);
const lib = await bundle(join(SRC, 'index.ts'), 'lib-bundle', withChartBundle);
for (const [name, result] of [['command line', cli], ['library', lib]]) {
  const vega = Object.keys(result.metafile.inputs).find((p) => /node_modules\/vega/.test(p));
  if (vega) throw new Error(`the ${name}'s bundle must not hold vega (it is the chart bundle's): ${vega}`);
}
const chart = await bundle(join(SRC, 'report', 'svg.ts'), 'chart-bundle', new Map());
const validator = await bundleValidator();
await writeThirdPartyLicenses(join(OUT, 'THIRD-PARTY-LICENSES'), [cli, lib, chart, validator]);
// The loader, then the entries: an entry never runs a half-written bundle.
await writeLoader();
await writeAtomically(join(OUT, 'index.cjs'), await readFile(join(ROOT, 'scripts', 'lib-entry.cjs'), 'utf8'));
await writeAtomically(join(OUT, 'index.js'), libraryModuleEntry());
await writeAtomically(join(OUT, 'cli.js'), await readFile(join(ROOT, 'scripts', 'cli-entry.mjs'), 'utf8'));
await chmod(join(OUT, 'cli.js'), 0o755);

/**
 * The method schema's precompiled validator (scripts/precompile-method-schema.mjs writes it to
 * dist/method/) with the ajv helpers it requires put into it, so that it needs no ajv installed.
 */
async function bundleValidator() {
  const file = join('method', 'method-schema.validate.cjs');
  const result = await esbuild.build({
    entryPoints: [join(ROOT, 'dist', file)],
    absWorkingDir: ROOT,
    bundle: true,
    format: 'cjs',
    platform: 'node',
    target: 'node20',
    legalComments: 'none',
    logLevel: 'warning',
    metafile: true,
    write: false,
  });
  await writeAtomically(join(OUT, file), result.outputFiles[0].text);
  return result;
}

/**
 * dist/bundle-loader.cjs, from scripts/bundle-loader.mjs: CommonJS, so that the library's
 * `require` entry (dist/index.cjs) loads it as the command line's entries do.
 */
async function writeLoader() {
  const result = await esbuild.build({
    entryPoints: [join(ROOT, 'scripts', 'bundle-loader.mjs')],
    absWorkingDir: ROOT,
    format: 'cjs',
    platform: 'node',
    target: 'node20',
    banner: { js: '// Built from scripts/bundle-loader.mjs by scripts/bundle-cli.mjs: see there.' },
    logLevel: 'warning',
    write: false,
  });
  await writeAtomically(join(OUT, 'bundle-loader.cjs'), result.outputFiles[0].text);
}

/**
 * dist/index.js, the library for `import`: the exports of dist/index.cjs by name. One
 * instance serves both (a StopError is the same class whichever way it was loaded).
 */
function libraryModuleEntry() {
  const names = Object.keys(createRequire(import.meta.url)(join(OUT, 'index.cjs')));
  const bad = names.filter((name) => !/^[A-Za-z_$][\w$]*$/.test(name));
  if (names.length === 0 || bad.length > 0) throw new Error(`the library's exports cannot be named in dist/index.js: ${JSON.stringify(names)}`);
  return (
    '// The library for `import`, written by scripts/bundle-cli.mjs: the exports of\n' +
    "// dist/index.cjs, the library's one instance (`require` loads it too), by name.\n" +
    "import library from './index.cjs';\n\n" +
    `export const {\n${names.map((name) => `  ${name},\n`).join('')}} = library;\n`
  );
}

/**
 * THIRD-PARTY-LICENSES: every package whose code a bundle holds, with its version and its
 * declared license, then the text of its license and notice files (packages that ship the
 * same text are listed together above it). The code travels without the package, so its
 * notices must travel with it.
 */
async function writeThirdPartyLicenses(path, results) {
  const dirs = new Set();
  for (const result of results) {
    for (const input of Object.keys(result.metafile.inputs)) {
      const at = input.lastIndexOf('node_modules/');
      if (at < 0) continue;
      const parts = input.slice(at + 'node_modules/'.length).split('/');
      dirs.add(join(ROOT, input.slice(0, at), 'node_modules', ...parts.slice(0, parts[0].startsWith('@') ? 2 : 1)));
    }
  }
  const byText = new Map(); // the license and notice text → the packages shipping it
  for (const dir of dirs) {
    const pkg = JSON.parse(await readFile(join(dir, 'package.json'), 'utf8'));
    const license = typeof pkg.license === 'string' ? pkg.license : (pkg.licenses ?? []).map((l) => l.type ?? l).join(' OR ');
    const files = (await readdir(dir)).filter((f) => /^(licen[cs]e|copying|notice)/i.test(f)).sort();
    if (!license && files.length === 0) throw new Error(`${pkg.name} is bundled but declares no license and ships no license file (${dir})`);
    const texts = [];
    for (const f of files) texts.push((await readFile(join(dir, f), 'utf8')).trim());
    const author = typeof pkg.author === 'string' ? pkg.author : pkg.author?.name;
    const text = texts.length > 0 ? texts.join('\n\n') : `(the package ships no license file; its package.json declares ${license}${author ? `, author ${author}` : ''})`;
    const line = `${pkg.name} ${pkg.version} (${license || 'see below'})`;
    if (!byText.has(text)) byText.set(text, new Set());
    byText.get(text).add(line);
  }
  const sorted = (lines) => [...lines].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
  const groups = [...byText].map(([text, lines]) => ({ lines: sorted(lines), text })).sort((a, b) => (a.lines[0] < b.lines[0] ? -1 : 1));
  const head =
    'phasebook bundles code of the packages below into the files of dist/ it runs (cli-bundle.js,\n' +
    'lib-bundle.js, chart-bundle.js, method/method-schema.validate.cjs), so that installing phasebook\n' +
    'does not install them. Each package is named with its version and declared license, followed by\n' +
    'its license and notice files as it ships them.\n';
  const body = groups.map((g) => `${g.lines.join('\n')}\n\n${g.text}\n`);
  await writeAtomically(path, [head, ...body].join('\n' + '='.repeat(78) + '\n\n'));
}

/** Bundle `entry` into `<OUT>/<name>.js`, wrapped, ASCII, its first line naming the build; returns esbuild's result. */
async function bundle(entry, name, replaced) {
  const result = await esbuild.build({
    entryPoints: [entry],
    absWorkingDir: ROOT,
    bundle: true,
    format: 'cjs',
    platform: 'node',
    target: 'node20',
    external: ['better-sqlite3'],
    plugins: [sources(replaced), noCanvas, noUnzipper],
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
  const wrapped = `(function (exports, require, module, __filename, __dirname, ${DIST_URL}, ${RUN_BUNDLE}) {\n${body}\n})`;
  const nonAscii = /[^\x00-\x7f]/.exec(wrapped);
  if (nonAscii) {
    // esbuild leaves regular expressions and template literals as written: spell such characters with \u escapes.
    throw new Error(`${name} must be ASCII (the loader reads it as Latin-1); found ${JSON.stringify(nonAscii[0])} in "${wrapped.slice(Math.max(0, nonAscii.index - 60), nonAscii.index + 20)}"`);
  }
  const buildId = createHash('sha256').update(wrapped).digest('hex');
  await writeAtomically(join(OUT, `${name}.js`), `// ${buildId}\n${wrapped}`);
  return result;
}

async function writeAtomically(path, text) {
  await mkdir(dirname(path), { recursive: true });
  await writeFile(`${path}.tmp`, text);
  await rename(`${path}.tmp`, path);
}
