// Build step (after tsc): bundle the command line into dist/cli.js, replacing
// tsc's dist/cli.js, with the parts loaded on demand in dist/cli-chunks/.
//
// Why: start-up. Resolving and compiling some thousand files (our modules, the
// dependencies' own, @stdlib's 350 small packages) cost more than the work of a
// small worklist. The library entry (dist/index.js) stays tsc's output.
//
// What stays as it is in the sources:
// - dynamic `import()`s stay on demand (exceljs, vega, the workbook checker);
// - better-sqlite3 (a native addon, optional) is loaded from node_modules;
// - a file a module finds next to itself through `import.meta.url` (templates,
//   package.json, the precompiled method validator) is found as from the module's
//   tsc-built copy in dist/, so the paths in the sources hold in the bundle too.
// What the bundle changes:
// - a module-level `const require = createRequire(import.meta.url)` is dropped, so
//   the packages it requires (mathjs's single file, @stdlib's t quantile) are
//   bundled like the rest; they still load when first required;
// - Node warns about `Buffer()` (DEP0005) only when the caller is outside
//   node_modules. Bundled dependency code is, though it is still theirs (exceljs's
//   zip writer calls `new Buffer`), so the entry silences DEP0005 as Node does for
//   node_modules. phasebook's own code does not call `Buffer()`.
import * as esbuild from 'esbuild';
import { mkdir, readFile, rename, rm, writeFile } from 'node:fs/promises';
import { dirname, join, relative, resolve, sep } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = resolve(fileURLToPath(new URL('..', import.meta.url)));
const SRC = join(ROOT, 'src');
/** `PHASEBOOK_BUNDLE_OUT` puts the bundle elsewhere (for comparing builds); default dist/. */
const OUT = resolve(process.env.PHASEBOOK_BUNDLE_OUT ?? join(ROOT, 'dist'));
const CHUNKS = 'cli-chunks';
/** Stands for the path from an output file to dist/ until the files are written. */
const DIST = '__phasebook_dist__/';

const REQUIRE_LINE = /^const require = createRequire\(import\.meta\.url\);$/m;

const sources = {
  name: 'phasebook-sources',
  setup(build) {
    build.onLoad({ filter: /\.ts$/ }, async (args) => {
      if (!args.path.startsWith(SRC + sep)) return undefined;
      const builtAs = relative(SRC, args.path).split(sep).join('/').replace(/\.ts$/, '.js');
      const text = (await readFile(args.path, 'utf8'))
        .replace(REQUIRE_LINE, '')
        .replaceAll('import.meta.url', `new URL(${JSON.stringify(DIST + builtAs)}, import.meta.url).href`);
      return { contents: text, loader: 'ts' };
    });
  },
};

const result = await esbuild.build({
  entryPoints: { cli: join(SRC, 'cli.ts') },
  outdir: OUT,
  chunkNames: `${CHUNKS}/[name]-[hash]`,
  bundle: true,
  splitting: true,
  format: 'esm',
  platform: 'node',
  target: 'node20',
  external: ['better-sqlite3'],
  plugins: [sources],
  // Bundled CommonJS code requires Node's built-in modules.
  banner: { js: "import { createRequire as __phasebookRequire } from 'node:module';\nconst require = __phasebookRequire(import.meta.url);" },
  legalComments: 'none',
  logLevel: 'warning',
  write: false,
});

const QUIET_DEP0005 = `
{
  const emitWarning = process.emitWarning;
  process.emitWarning = function (warning, ...rest) {
    if (rest[1] === 'DEP0005' || (rest[0] && typeof rest[0] === 'object' && rest[0].code === 'DEP0005')) return;
    return emitWarning.call(this, warning, ...rest);
  };
}
`;

await rm(join(OUT, CHUNKS), { recursive: true, force: true });
const entry = join(OUT, 'cli.js');
const textOf = (file) => {
  const toDist = relative(dirname(file.path), OUT).split(sep).join('/');
  return file.text.replaceAll(DIST, toDist ? `${toDist}/` : './');
};
for (const file of result.outputFiles.filter((f) => f.path !== entry)) {
  await mkdir(dirname(file.path), { recursive: true });
  await writeFile(file.path, textOf(file));
}
// The entry last, through a temporary name: a half-written dist/cli.js is never run.
const main = result.outputFiles.find((f) => f.path === entry);
await writeFile(`${entry}.tmp`, textOf(main) + QUIET_DEP0005);
await rename(`${entry}.tmp`, entry);
