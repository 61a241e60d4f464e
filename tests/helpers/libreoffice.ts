/**
 * Recalculate an .xlsx with LibreOffice (headless) so tests can prove that a spreadsheet program
 * computes the same numbers as the engine from the formulas we write.
 *
 * LibreOffice does not recalculate an .xlsx on load unless told to: the setting
 * /org.openoffice.Office.Calc/Formula/Load OOXMLRecalcMode is 1 ("never") by default, and 0 means
 * "always". We run every conversion in a private profile (-env:UserInstallation) whose
 * registrymodifications.xcu sets it to 0, so the converted file carries freshly computed cached
 * values (tests check this with a deliberately wrong cached result).
 *
 * CI installs LibreOffice with:
 *   apt-get update && DEBIAN_FRONTEND=noninteractive apt-get install -y --no-install-recommends libreoffice-calc-nogui
 */
import { execFile } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, delimiter, extname, join } from 'node:path';
import { pathToFileURL } from 'node:url';

const CANDIDATES = ['soffice', 'libreoffice'];
const FIXED_PATHS = ['/usr/bin/soffice', '/usr/lib/libreoffice/program/soffice', '/opt/libreoffice/program/soffice'];

/** Path of the soffice binary: $PHASEBOOK_SOFFICE, then PATH, then the usual install places. */
export function findSoffice(): string | undefined {
  const fromEnv = process.env.PHASEBOOK_SOFFICE;
  if (fromEnv) return existsSync(fromEnv) ? fromEnv : undefined;
  for (const dir of (process.env.PATH ?? '').split(delimiter)) {
    if (!dir) continue;
    for (const name of CANDIDATES) {
      const p = join(dir, name);
      if (existsSync(p)) return p;
    }
  }
  return FIXED_PATHS.find((p) => existsSync(p));
}

/** True when a LibreOffice binary is installed (synchronous, for `it.skipIf`). */
export function isLibreOfficeAvailable(): boolean {
  return findSoffice() !== undefined;
}

const RECALC_ALWAYS_XCU = `<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse"><value>0</value></prop></item>
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="ODFRecalcMode" oor:op="fuse"><value>0</value></prop></item>
</oor:items>
`;

let profileDir: string | undefined;
/** One profile per test process; LibreOffice cannot share a profile between running instances. */
function profile(): string {
  if (profileDir === undefined) {
    const dir = mkdtempSync(join(tmpdir(), 'phasebook-lo-profile-'));
    mkdirSync(join(dir, 'user'), { recursive: true });
    writeFileSync(join(dir, 'user', 'registrymodifications.xcu'), RECALC_ALWAYS_XCU);
    profileDir = dir;
  }
  return profileDir;
}

/** Delete this process's LibreOffice profile (call from afterAll); the next conversion makes a new one. */
export async function disposeLibreOfficeProfile(): Promise<void> {
  await queue;
  if (profileDir !== undefined) rmSync(profileDir, { recursive: true, force: true });
  profileDir = undefined;
}

/** Conversions run one at a time within a process (they share the profile). */
let queue: Promise<unknown> = Promise.resolve();

/**
 * Open `xlsxPath` in headless LibreOffice, recalculate every formula, save as .xlsx in a fresh
 * temporary folder and return the new file's path. The input file is not changed.
 */
export function recalcWithLibreOffice(xlsxPath: string, options: { timeoutMs?: number } = {}): Promise<string> {
  const run = queue.then(() => convert(xlsxPath, options.timeoutMs ?? 120_000));
  queue = run.catch(() => undefined);
  return run;
}

function convert(xlsxPath: string, timeoutMs: number): Promise<string> {
  const soffice = findSoffice();
  if (soffice === undefined) return Promise.reject(new Error('LibreOffice is not installed: no soffice binary found'));
  const outDir = mkdtempSync(join(tmpdir(), 'phasebook-lo-out-'));
  const args = [
    `-env:UserInstallation=${pathToFileURL(profile()).href}`,
    '--headless',
    '--norestore',
    '--nolockcheck',
    '--convert-to',
    'xlsx',
    '--outdir',
    outDir,
    xlsxPath,
  ];
  const expected = join(outDir, `${basename(xlsxPath, extname(xlsxPath))}.xlsx`);
  return new Promise((resolve, reject) => {
    execFile(soffice, args, { timeout: timeoutMs }, (err, stdout, stderr) => {
      if (err) {
        reject(new Error(`LibreOffice failed to convert "${xlsxPath}": ${err.message}\n${stdout}${stderr}`));
        return;
      }
      // soffice can exit 0 without writing anything (e.g. a file it cannot open).
      if (!existsSync(expected)) {
        reject(new Error(`LibreOffice wrote no file for "${xlsxPath}": expected "${expected}"\n${stdout}${stderr}`));
        return;
      }
      resolve(expected);
    });
  });
}
