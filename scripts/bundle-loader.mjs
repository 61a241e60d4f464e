// Runs one of the build's bundles, with V8's code cache kept in a folder of the
// user's own; built to dist/bundle-loader.cjs by scripts/bundle-cli.mjs and used
// by the entries dist/cli.js (the command line) and dist/index.cjs (the library).
//
// A bundle `<name>.js` is one CommonJS file, wrapped as Node wraps a module. The
// first run of the command line on a machine compiles it as usual and, as the
// process ends, keeps what V8 compiled (the code of every function the run used)
// in the user's cache folder; later runs take that code in instead of parsing and
// compiling the bundle again. Nothing of this ships in the package: the cache is
// made on the machine that uses it, by the Node that reads it.
//
// A cache file is used only when it was made from this very bundle (the build id
// on the bundle's first line, which is a digest of the bundle, is also the file's
// first bytes: V8 itself checks only the source's length), by the same Node
// version, architecture and flags (on the command line or in NODE_OPTIONS: they
// name the file, so that runs with other flags keep a cache of their own), and
// V8 accepts it. Otherwise the bundle is compiled as usual, and the run writes a new
// cache. Any failure to read, make or write a cache is ignored: the same code
// runs either way, only slower.
//
// Where: $PHASEBOOK_CACHE_DIR if set; else $XDG_CACHE_HOME/phasebook, or the
// platform's per-user cache folder (~/.cache/phasebook, ~/Library/Caches/phasebook,
// %LOCALAPPDATA%\phasebook\Cache); without a home folder, phasebook-<uid> in the
// temporary folder, used only when this user owns it and no one else may write to
// it. PHASEBOOK_CODE_CACHE=off turns the cache off.
import { createHash } from 'node:crypto';
import { lstatSync, mkdirSync, readdirSync, readFileSync, renameSync, statSync, unlinkSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { homedir, tmpdir } from 'node:os';
import { dirname, isAbsolute, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import vm from 'node:vm';

const ID_LENGTH = 64;
/** Cache files kept per bundle: one per Node version, flag set and build in use, the newest. */
const KEEP = 4;

/**
 * Run the bundle `name` of the dist/ folder at `distUrl` (the entry's own
 * folder) and return its exports. The bundle gets two more parameters: distUrl, by
 * which it finds files of dist/, and a function by which it runs another bundle
 * of dist/ the same way (the chart bundle, when a report is drawn).
 *
 * With `codeCache` (the command line), the compiled code is read from and
 * written to the user's cache folder; without it (the library, loaded once by
 * a longer-lived script), the bundle is compiled as usual.
 */
export function runBundle(distUrl, name, { codeCache = false } = {}) {
  const bundle = fileURLToPath(new URL(`./${name}.js`, distUrl));
  const source = readFileSync(bundle, 'latin1'); // the build makes sure it is ASCII
  const buildId = source.slice(3, 3 + ID_LENGTH); // the first line is "// <id>"
  const cache = codeCache ? cacheFile(name, buildId) : undefined;
  const cachedData = cache === undefined ? undefined : readCache(cache.path, buildId);
  // A bundle holds no dynamic import(): a script would need Node's experimental
  // vm loader for it, which the code cache does not keep.
  const script = new vm.Script(source, { filename: bundle, cachedData });
  if (cache !== undefined && (cachedData === undefined || script.cachedDataRejected)) {
    process.once('exit', () => writeCache(cache, buildId, script));
  }
  const run = script.runInThisContext();
  const module = { exports: {} };
  const runAnother = (url, other) => runBundle(url, other, { codeCache });
  run(module.exports, createRequire(bundle), module, bundle, dirname(bundle), distUrl, runAnother);
  return module.exports;
}

/** The cache file for this bundle, Node and flags: `{ dir, path, prefix }`, or undefined when there is no folder for it. */
function cacheFile(name, buildId) {
  const env = process.env;
  if (/^(off|0|false|no)$/i.test(env.PHASEBOOK_CODE_CACHE ?? '')) return undefined;
  const dir = cacheDir(env);
  if (dir === undefined) return undefined;
  const key = createHash('sha256')
    .update([buildId, process.version, process.arch, process.platform, env.NODE_OPTIONS ?? '', ...process.execArgv].join('\0'))
    .digest('hex')
    .slice(0, 16);
  const prefix = `${name}-`;
  return { dir, path: join(dir, `${prefix}${key}.cache`), prefix };
}

function cacheDir(env) {
  if (env.PHASEBOOK_CACHE_DIR) return isAbsolute(env.PHASEBOOK_CACHE_DIR) ? env.PHASEBOOK_CACHE_DIR : undefined;
  if (env.XDG_CACHE_HOME && isAbsolute(env.XDG_CACHE_HOME)) return join(env.XDG_CACHE_HOME, 'phasebook');
  let home = '';
  try {
    home = homedir();
  } catch {
    // no home folder (a user without one): the temporary folder below
  }
  if (home && isAbsolute(home)) {
    if (process.platform === 'win32') return join(env.LOCALAPPDATA || join(home, 'AppData', 'Local'), 'phasebook', 'Cache');
    if (process.platform === 'darwin') return join(home, 'Library', 'Caches', 'phasebook');
    return join(home, '.cache', 'phasebook');
  }
  // A folder in the shared temporary folder is ours only if we own it and no one else can write to it.
  if (typeof process.getuid !== 'function') return undefined;
  const dir = join(tmpdir(), `phasebook-${process.getuid()}`);
  try {
    mkdirSync(dir, { mode: 0o700 });
  } catch {
    // there already (checked below), or not to be made
  }
  try {
    const st = lstatSync(dir);
    return st.isDirectory() && st.uid === process.getuid() && (st.mode & 0o022) === 0 ? dir : undefined;
  } catch {
    return undefined;
  }
}

/** The cached code in `path` made from the bundle with this build id, or undefined. */
function readCache(path, buildId) {
  let bytes;
  try {
    bytes = readFileSync(path);
  } catch {
    return undefined;
  }
  return bytes.length > ID_LENGTH && bytes.toString('latin1', 0, ID_LENGTH) === buildId ? bytes.subarray(ID_LENGTH) : undefined;
}

/**
 * Keep what V8 compiled for `script`: written to a file of its own, then renamed
 * over the cache, so that a reader sees the whole old file or the whole new one;
 * then only the newest KEEP files of this bundle stay. Failures are ignored.
 */
function writeCache({ dir, path, prefix }, buildId, script) {
  const tmp = `${path}.${process.pid}.${Math.random().toString(36).slice(2)}.tmp`;
  try {
    mkdirSync(dir, { recursive: true, mode: 0o700 });
    const data = script.createCachedData();
    if (data.length === 0) return;
    writeFileSync(tmp, Buffer.concat([Buffer.from(buildId, 'latin1'), data]), { mode: 0o600 });
    renameSync(tmp, path);
  } catch {
    try {
      unlinkSync(tmp);
    } catch {
      // never written
    }
    return;
  }
  try {
    const mine = readdirSync(dir)
      .filter((f) => f.startsWith(prefix) && f.endsWith('.cache'))
      .map((f) => ({ f, t: statSync(join(dir, f)).mtimeMs }))
      .sort((a, b) => b.t - a.t);
    for (const { f } of mine.slice(KEEP)) unlinkSync(join(dir, f));
  } catch {
    // another run is pruning too, or the folder cannot be listed: leave it
  }
}

