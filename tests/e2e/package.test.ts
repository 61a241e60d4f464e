/**
 * phasebook as a user installs it (issue 18): the project packed as npm packs it, the
 * tarball installed into an empty folder with `npm install --omit=optional` (from npm's
 * cache where it can), then used by name: the command, a shipped method by name, standard
 * input, --json, and the library from CommonJS, ESM and TypeScript (nodenext).
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT } from '../helpers/cli.js';

const dir = mkdtempSync(join(tmpdir(), 'phasebook-package-'));
const app = join(dir, 'lab-app');
let install: { stdout: string; stderr: string; status: number | null };
const npm = (args: string[], cwd: string) => spawnSync('npm', args, { cwd, encoding: 'utf8', timeout: 300_000 });

beforeAll(() => {
  // --ignore-scripts: the suite has just built dist/, so prepack need not build it again.
  const packed = npm(['pack', '--ignore-scripts', '--pack-destination', dir, '--silent'], ROOT);
  expect(packed.status, packed.stderr).toBe(0);
  const tarball = join(dir, packed.stdout.trim().split('\n').pop()!);
  mkdirSync(app);
  writeFileSync(join(app, 'package.json'), JSON.stringify({ name: 'lab-app', private: true }));
  install = npm(['install', tarball, '--omit=optional', '--prefer-offline', '--no-audit', '--no-fund'], app);
}, 600_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const bin = () => join(app, 'node_modules', '.bin', 'phasebook');
const run = (args: string[], input?: string) => spawnSync(bin(), args, { cwd: app, encoding: 'utf8', input, timeout: 120_000 });

describe('the packed and installed package', () => {
  it('installs without engine warnings and without asking to run a script', () => {
    expect(install.status, install.stderr).toBe(0);
    expect(install.stderr).not.toMatch(/EBADENGINE|install-scripts/);
  });

  it('ships the license, the methods and the built code, and nothing of the repository besides', () => {
    const pkg = join(app, 'node_modules', 'phasebook');
    expect(readdirSync(pkg).sort()).toEqual(['LICENSE', 'README.md', 'dist', 'package.json', 'templates']);
    // dist/: the entries, the bundles, the loader, the precompiled method validator, the bundled
    // code's licenses, and tsc's type declarations; none of tsc's modules, and no code cache (a run
    // keeps its own in the user's cache folder).
    const dist = join(pkg, 'dist');
    const built = readdirSync(dist, { recursive: true, withFileTypes: true })
      .filter((d) => d.isFile() && !d.name.endsWith('.d.ts'))
      .map((d) => relative(dist, join(d.parentPath, d.name)));
    expect(built.sort()).toEqual([
      'THIRD-PARTY-LICENSES',
      'bundle-loader.cjs',
      'chart-bundle.js',
      'cli-bundle.js',
      'cli.js',
      'index.cjs',
      'index.js',
      'lib-bundle.js',
      'method/method-schema.validate.cjs',
    ]);
  });

  it('holds nothing of the machine that built it: no file names the folder it was built in', () => {
    const pkg = join(app, 'node_modules', 'phasebook');
    const files = readdirSync(pkg, { recursive: true, withFileTypes: true }).filter((d) => d.isFile());
    expect(files.length).toBeGreaterThan(20);
    const naming = files.map((d) => join(d.parentPath, d.name)).filter((f) => readFileSync(f, 'latin1').includes(ROOT));
    expect(naming).toEqual([]);
  });

  it("keeps the command line's code cache in the user's cache folder, never in the package", () => {
    const listing = () => readdirSync(join(app, 'node_modules', 'phasebook'), { recursive: true }).sort();
    const shipped = listing();
    const cache = join(dir, 'user-cache');
    const r = spawnSync(bin(), ['recalc', join(ROOT, 'samples/kestrel-brook-2026-11.csv'), '-m', 'surface-water', '-o', 'cached', '--outputs', 'csv', '--quiet'], {
      cwd: app,
      encoding: 'utf8',
      env: { ...process.env, PHASEBOOK_CACHE_DIR: undefined, XDG_CACHE_HOME: cache },
    });
    expect(r.status, r.stderr).toBe(0);
    expect(readdirSync(join(cache, 'phasebook'))).toEqual([expect.stringMatching(/^cli-bundle-[0-9a-f]{16}\.cache$/)]);
    expect(listing()).toEqual(shipped);
  });

  it('installs nothing but itself: its code is bundled, and the optional SQLite package is left out', () => {
    expect(readdirSync(join(app, 'node_modules')).filter((f) => !f.startsWith('.')).sort()).toEqual(['phasebook']);
  });

  it("carries the license notices of the code it bundles", () => {
    const notices = readFileSync(join(app, 'node_modules', 'phasebook', 'dist', 'THIRD-PARTY-LICENSES'), 'utf8');
    for (const bundled of ['exceljs 4.4.0 (MIT)', 'mathjs 15.2.0 (Apache-2.0)', 'papaparse 5.7.1 (MIT)', 'vega-lite 6.4.3 (BSD-3-Clause)', 'ajv 8.20.0 (MIT)']) {
      expect(notices).toContain(bundled);
    }
  });

  it('runs by name: a shipped method by name, --json on stdout', () => {
    const version = run(['--version']);
    expect(version.stdout.trim()).toBe(JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8')).version);
    const r = run(['recalc', join(ROOT, 'samples/kestrel-brook-2026-11.csv'), '-m', 'surface-water', '-o', 'by-name', '--json']);
    expect(r.status, r.stderr).toBe(0);
    expect(JSON.parse(r.stdout)).toMatchObject({ exit_code: 0, rows_in: 44, verdict: { verdict: 'pass' } });
  });

  it('reads a worklist from standard input', () => {
    const r = run(['recalc', '-', '-m', 'surface-water', '-o', 'piped', '--name', 'kestrel', '--outputs', 'csv'], readFileSync(join(ROOT, 'samples/kestrel-brook-2026-11.csv'), 'utf8'));
    expect(r.status, r.stderr).toBe(0);
    expect(readdirSync(join(app, 'piped'))).toEqual(['kestrel.results.csv']);
  });

  it.each([
    ['CommonJS', ['-e', "const p = require('phasebook'); console.log(typeof p.recalculate, typeof p.writeOutputs)"]],
    ['ESM', ['--input-type=module', '-e', "import { recalculate, writeOutputs } from 'phasebook'; console.log(typeof recalculate, typeof writeOutputs)"]],
  ])('loads as a library from %s', (_kind, args) => {
    expect(execFileSync(process.execPath, args, { cwd: app, encoding: 'utf8' }).trim()).toBe('function function');
  });

  it('is one library whichever way it is loaded: the same StopError class from require and import', () => {
    const script = "import { createRequire } from 'node:module'; import { StopError } from 'phasebook'; console.log(createRequire(import.meta.url)('phasebook').StopError === StopError)";
    expect(execFileSync(process.execPath, ['--input-type=module', '-e', script], { cwd: app, encoding: 'utf8' }).trim()).toBe('true');
  });

  it("runs the README's library example as it stands", () => {
    const readme = readFileSync(join(ROOT, 'README.md'), 'utf8');
    const example = /### Library[\s\S]*?```js\n([\s\S]*?)```/.exec(readme)?.[1];
    expect(example).toBeDefined();
    writeFileSync(join(app, 'end-of-day.mjs'), example!);
    const r = spawnSync(process.execPath, ['end-of-day.mjs'], { cwd: app, encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toContain('every control passed and no row has an input error');
    expect(readdirSync(join(app, 'out')).sort()).toEqual(['wells-0412.report.html', 'wells-0412.results.csv', 'wells-0412.xlsx']);
  });

  it("has public types that import no other package's types", () => {
    const root = join(app, 'node_modules', 'phasebook', 'dist');
    const seen = new Set<string>();
    const outside: string[] = [];
    const walk = (file: string) => {
      if (seen.has(file)) return;
      seen.add(file);
      for (const m of readFileSync(file, 'utf8').matchAll(/(?:from|import\()\s*['"]([^'"]+)['"]/g)) {
        const spec = m[1]!;
        if (spec.startsWith('.')) walk(join(file, '..', spec.replace(/\.js$/, '.d.ts')));
        else if (!spec.startsWith('node:')) outside.push(`${spec} (from ${file.slice(root.length + 1)})`);
      }
    };
    walk(join(root, 'index.d.ts'));
    expect(seen.size).toBeGreaterThan(10);
    expect(outside).toEqual([]);
  });

  // The app's package.json has no "type": check.ts is CommonJS to TypeScript, check.mts an ES module.
  it.each(['check.ts', 'check.mts'])('type-checks from TypeScript with module nodenext (%s)', (file) => {
    writeFileSync(
      join(app, file),
      "import { recalculate, type RecalcResult } from 'phasebook';\nexport async function verdictOf(file: string): Promise<RecalcResult['verdict']['verdict']> {\n  return (await recalculate(file, { method: 'surface-water' })).verdict.verdict;\n}\nexport const rowsNamed = (r: RecalcResult): number[] => r.flags.map((f) => f.spreadsheetRow);\n",
    );
    writeFileSync(join(app, 'tsconfig.json'), JSON.stringify({ compilerOptions: { module: 'nodenext', moduleResolution: 'nodenext', target: 'es2022', strict: true, noEmit: true, types: [] }, files: [file] }));
    const tsc = spawnSync(process.execPath, [join(ROOT, 'node_modules', 'typescript', 'bin', 'tsc'), '-p', 'tsconfig.json'], { cwd: app, encoding: 'utf8' });
    expect(tsc.status, tsc.stdout + tsc.stderr).toBe(0);
  });
});
