// Runs one of the build's bundles through V8's code cache; copied to
// dist/bundle-loader.js by scripts/bundle-cli.mjs and used by the entries
// dist/cli.js (the command line) and dist/chart-worker.js (the chart worker).
//
// A bundle `<name>.js` is one CommonJS file, wrapped as Node wraps a module;
// `<name>.cache` holds the code V8 compiled for it during a run at build time,
// so a run skips parsing and compiling most of it again. The cache is used only
// when it was made from this very bundle (the build id on the bundle's first
// line is also the cache's first bytes) and V8 accepts it (same V8, same
// flags); otherwise the bundle is compiled as usual. Either way the same code runs.
import { readFileSync, renameSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
import vm from 'node:vm';

const ID_LENGTH = 64;

/**
 * Run the bundle `name` of the dist/ folder at `distUrl` (the caller's own
 * folder: the tests run copies of the entry next to links to the real files)
 * and return its exports. The bundle gets three more parameters: distUrl, by
 * which it finds files of dist/; this function, by which it runs another
 * bundle; and `handover`, what the entry started for it (a chart worker).
 *
 * At build time only (PHASEBOOK_WRITE_CODE_CACHE set), what V8 compiled is kept
 * in `<name>.cache` when the process, or the worker thread, ends.
 */
export function runBundle(distUrl, name, handover = {}) {
  const bundle = fileURLToPath(new URL(`./${name}.js`, distUrl));
  const cache = fileURLToPath(new URL(`./${name}.cache`, distUrl));
  const source = readFileSync(bundle, 'latin1'); // the build makes sure it is ASCII
  const buildId = source.slice(3, 3 + ID_LENGTH); // the first line is "// <id>"
  // A bundle holds no dynamic import(): a script would need Node's experimental
  // vm loader for it, which the code cache does not keep.
  const script = new vm.Script(source, { filename: bundle, cachedData: cacheFor(cache, buildId) });
  if (process.env.PHASEBOOK_WRITE_CODE_CACHE) {
    process.on('exit', () => {
      writeFileSync(`${cache}.tmp`, Buffer.concat([Buffer.from(buildId, 'latin1'), script.createCachedData()]));
      renameSync(`${cache}.tmp`, cache);
    });
  }
  const run = script.runInThisContext();
  const module = { exports: {} };
  run(module.exports, createRequire(bundle), module, bundle, dirname(bundle), distUrl, runBundle, handover);
  return module.exports;
}

/** The cached code made from the bundle with this build id, or undefined. */
function cacheFor(path, id) {
  let bytes;
  try {
    bytes = readFileSync(path);
  } catch {
    return undefined;
  }
  return bytes.length > ID_LENGTH && bytes.toString('latin1', 0, ID_LENGTH) === id ? bytes.subarray(ID_LENGTH) : undefined;
}
