#!/usr/bin/env node
// The command line's entry, copied to dist/cli.js by scripts/bundle-cli.mjs.
//
// It runs the bundle dist/cli-bundle.js (the whole command line in one file)
// through V8's code cache: dist/cli-bundle.cache holds the code V8 compiled
// for the bundle during a run at build time, so a run skips parsing and
// compiling most of the bundle again. The cache is used only when it was
// made from this very bundle (the build id on the bundle's first line is also
// the cache's first bytes) and V8 accepts it (same V8, same flags); otherwise
// the bundle is compiled as usual. Either way the same code runs.
import { readFileSync, renameSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
import vm from 'node:vm';

const BUNDLE = fileURLToPath(new URL('./cli-bundle.js', import.meta.url));
const CACHE = fileURLToPath(new URL('./cli-bundle.cache', import.meta.url));
const ID_LENGTH = 64;

// Node warns about `Buffer()` (DEP0005) only when the caller is outside
// node_modules. Bundled dependency code is (exceljs's zip writer calls
// `new Buffer`), so this entry silences DEP0005 as Node does for node_modules.
// phasebook's own code does not call `Buffer()`.
const emitWarning = process.emitWarning;
process.emitWarning = function (warning, ...rest) {
  if (rest[1] === 'DEP0005' || (rest[0] && typeof rest[0] === 'object' && rest[0].code === 'DEP0005')) return;
  return emitWarning.call(this, warning, ...rest);
};

const source = readFileSync(BUNDLE, 'latin1'); // the build makes sure it is ASCII
const buildId = source.slice(3, 3 + ID_LENGTH); // the first line is "// <id>"
const cachedData = cacheFor(buildId);
// The bundle holds no dynamic import(): a script would need Node's experimental
// vm loader for it, which the code cache does not keep.
const script = new vm.Script(source, { filename: BUNDLE, cachedData });

// At build time only: after the run, keep what V8 compiled (with the build id in front).
const writeCacheTo = process.env.PHASEBOOK_WRITE_CODE_CACHE;
if (writeCacheTo) {
  process.on('exit', () => {
    writeFileSync(`${writeCacheTo}.tmp`, Buffer.concat([Buffer.from(buildId, 'latin1'), script.createCachedData()]));
    renameSync(`${writeCacheTo}.tmp`, writeCacheTo);
  });
}

// The bundle is CommonJS wrapped as Node wraps a module, plus the URL of dist/.
const run = script.runInThisContext();
const module = { exports: {} };
run(module.exports, createRequire(BUNDLE), module, BUNDLE, dirname(BUNDLE), new URL('./', import.meta.url).href);

/** The cached code made from the bundle with this build id, or undefined. */
function cacheFor(id) {
  let bytes;
  try {
    bytes = readFileSync(CACHE);
  } catch {
    return undefined;
  }
  return bytes.length > ID_LENGTH && bytes.toString('latin1', 0, ID_LENGTH) === id ? bytes.subarray(ID_LENGTH) : undefined;
}
