/**
 * Ctrl-C in the one moment the CLI test cannot aim at: while commitAll renames a
 * set of outputs into place. The signal must wait, the set must go back to the
 * previous outputs, commitAll must then throw Interrupted, and the process exit 130
 * (the command line's signal handlers, src/cli-signals.ts) with no temp or backup
 * file left (issue 5, "nothing lost").
 *
 * A child process runs the built module (dist/write/atomic.js) with
 * `fs/promises.rename` wrapped so that SIGINT arrives right after the first
 * output has been renamed into place (node:module syncBuiltinESMExports makes
 * the ESM binding see the wrapper).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, readdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ROOT, tempDir } from '../helpers/cli.js';

const ATOMIC = join(ROOT, 'dist/write/atomic.js');
const SIGNALS = join(ROOT, 'dist/cli-signals.js');

function script(folder: string, force: boolean): string {
  return `
    const fsp = require('node:fs/promises');
    const { syncBuiltinESMExports } = require('node:module');
    const rename = fsp.rename;
    let renames = 0;
    fsp.rename = async (from, to) => {
      await rename(from, to);
      if (++renames === 1) {
        process.kill(process.pid, 'SIGINT');
        await new Promise((r) => setTimeout(r, 200)); // the signal is delivered meanwhile
      }
    };
    syncBuiltinESMExports();
    (async () => {
      const { commitAll } = await import(${JSON.stringify(pathToFileURL(ATOMIC).href)});
      const { installSignalHandlers } = await import(${JSON.stringify(pathToFileURL(SIGNALS).href)});
      installSignalHandlers();
      const job = (name) => ({ target: ${JSON.stringify(folder)} + '/' + name, write: (tmp) => fsp.writeFile(tmp, 'new ' + name) });
      try {
        await commitAll([job('a.csv'), job('b.xlsx'), job('c.html')], { force: ${force} });
      } catch (err) {
        // As the command line does: the writer put the outputs back and says so; the exit code is the signal's.
        if (err.name !== 'Interrupted') throw err;
        process.exitCode = err.exitCode;
        return;
      }
      process.stdout.write('finished without the signal');
    })();
  `;
}

describe('commitAll and a signal during its rename phase', () => {
  it.each([
    { name: 'replacing outputs (--force): the previous ones are put back', force: true },
    { name: 'new outputs: none is left', force: false },
  ])('$name; exit 130, no temp or backup file', ({ force }) => {
    if (!existsSync(ATOMIC)) throw new Error('dist/write/atomic.js is missing: run `npm run build` first');
    const folder = tempDir('phasebook-atomic-sig-');
    if (force) for (const name of ['a.csv', 'b.xlsx', 'c.html']) writeFileSync(join(folder, name), `old ${name}`);
    const r = spawnSync(process.execPath, ['-e', script(folder, force)], { encoding: 'utf8', timeout: 60_000 });
    expect(r.stdout).toBe('');
    expect(r.stderr).toBe('');
    expect(r.status).toBe(130);
    if (force) {
      expect(readdirSync(folder).sort()).toEqual(['a.csv', 'b.xlsx', 'c.html']);
      for (const name of ['a.csv', 'b.xlsx', 'c.html']) expect(readFileSync(join(folder, name), 'utf8')).toBe(`old ${name}`);
    } else {
      expect(readdirSync(folder)).toEqual([]);
    }
  });
});
