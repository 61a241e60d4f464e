/**
 * The reviewer's round trip on the built CLI: a workbook from `recalc` opened and saved by
 * LibreOffice (recalculating every formula on load: tests/helpers/libreoffice.ts) and by openpyxl
 * (which keeps no formula results), with a sign-off typed in, an input typed over, a computed
 * cell changed, and signed with `phasebook sign` (keys made by openssl here) before and after;
 * each time `verify`'s exit code and words are checked.
 *
 * Needs soffice and /usr/bin/python3 with openpyxl: skipped without them on a workstation,
 * an error on CI (tests/helpers/tools.ts).
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';
import { disposeLibreOfficeProfile, isLibreOfficeAvailable, recalcWithLibreOffice } from '../helpers/libreoffice.js';
import { skipWithout } from '../helpers/tools.js';

const PYTHON = '/usr/bin/python3';
const haveOpenpyxl = spawnSync(PYTHON, ['-c', 'import openpyxl'], { stdio: 'ignore' }).status === 0;
const haveOpenssl = spawnSync('openssl', ['version'], { stdio: 'ignore' }).status === 0;
const ready = !skipWithout('LibreOffice', isLibreOfficeAvailable()) && !skipWithout('openpyxl', haveOpenpyxl) && !skipWithout('openssl', haveOpenssl);

/**
 * Open `src` with openpyxl, run `edit` (Python, with `ws(name)` and `row_of(ws, key)`), save as `dst`.
 * openpyxl keeps formulas as text and drops their cached results.
 */
function openpyxlSave(src: string, dst: string, edit = ''): void {
  const script = `
import sys, openpyxl
wb = openpyxl.load_workbook(sys.argv[1])
ws = lambda name: wb[name]
def row_of(sheet, key):
    for row in sheet.iter_rows(min_col=1, max_col=1):
        if row[0].value == key:
            return row[0].row
    raise SystemExit('no row ' + key)
${edit}
wb.save(sys.argv[2])
`;
  const r = spawnSync(PYTHON, ['-c', script, src, dst], { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`openpyxl could not save ${dst}: ${r.stderr}`);
}

let dir: string;
let workbook: string;
const keys: Record<string, { key: string; pub: string }> = {};

beforeAll(() => {
  if (!ready) return;
  dir = tempDir('phasebook-round-trip-');
  const r = runCli([
    'recalc',
    join(ROOT, 'samples/kestrel-brook-2026-11.csv'),
    '--method',
    join(ROOT, 'templates/surface-water.yaml'),
    '--out',
    dir,
    '--outputs',
    'xlsx',
    '--timestamp',
    '2026-11-20T16:00:00Z',
    '--quiet',
  ]);
  expect(r.code, r.stderr).toBe(0);
  workbook = join(dir, 'kestrel-brook-2026-11.xlsx');
  for (const name of ['analyst', 'reviewer', 'stranger']) {
    const key = join(dir, `${name}.pem`);
    const pub = join(dir, `${name}.pub.pem`);
    execFileSync('openssl', ['genpkey', '-algorithm', 'ed25519', '-out', key]);
    execFileSync('openssl', ['pkey', '-in', key, '-pubout', '-out', pub]);
    keys[name] = { key, pub };
  }
});

afterAll(async () => {
  await disposeLibreOfficeProfile();
  if (dir) rmSync(dir, { recursive: true, force: true });
});

const UNTOUCHED = /: untouched: 44 rows recomputed, every cell matches; the integrity digest matches/;

describe.skipIf(!ready)('the reviewer round trip', () => {
  it('saved unchanged by LibreOffice: exit 0, untouched', async () => {
    const saved = await recalcWithLibreOffice(workbook);
    const r = runCli(['verify', saved]);
    expect(r.code, r.stdout).toBe(0);
    expect(r.stdout).toBe('');
    expect(r.stderr).toBe(`phasebook verify: ${saved}: untouched: 44 rows recomputed, every cell matches; the integrity digest matches\n`);
  }, 120_000);

  it('saved unchanged by openpyxl: exit 0, and the results it dropped are recomputed and said so', () => {
    const saved = join(dir, 'openpyxl-unchanged.xlsx');
    openpyxlSave(workbook, saved);
    const r = runCli(['verify', saved]);
    expect(r.code, r.stdout).toBe(0);
    expect(r.stderr).toMatch(UNTOUCHED);
    expect(r.stderr).toMatch(/; \d+ formula cells had no saved result \(the program that saved the workbook dropped them\) and were recomputed\n$/);
  });

  it('a sign-off typed in (openpyxl; the date as a spreadsheet date), then saved by LibreOffice: exit 0, the sign-off reported as typed', async () => {
    const typed = join(dir, 'typed.xlsx');
    openpyxlSave(workbook, typed, `p = ws('Provenance'); p.cell(row=row_of(p, 'reviewed by'), column=2, value='B. Reyes'); p.cell(row=row_of(p, 'reviewed on'), column=2, value=__import__('datetime').date(2026, 11, 21))`);
    const saved = await recalcWithLibreOffice(typed);
    const r = runCli(['verify', saved]);
    expect(r.code, r.stdout).toBe(0);
    expect(r.stderr).toMatch(UNTOUCHED);
    const lines = r.stdout.trimEnd().split('\n');
    expect(lines).toHaveLength(2);
    expect(lines[0]).toMatch(/^Provenance!B\d+, sign-off "reviewed by" \(typed, not checked\): "B\. Reyes"$/);
    expect(lines[1]).toMatch(/^Provenance!B\d+, sign-off "reviewed on" \(typed, not checked\): "2026-11-21"$/);
  }, 120_000);

  it('an input typed over (openpyxl): exit 1, its cell, column, sample and value named by the row and column checks', () => {
    // Results!L7 is "Sample Vol (mL)" of "KB-03 Footbridge", 1000 when written (samples/kestrel-brook-2026-11.csv).
    const changed = join(dir, 'input-changed.xlsx');
    openpyxlSave(workbook, changed, `ws('Results')['L7'] = 900`);
    const r = runCli(['verify', changed]);
    expect(r.code).toBe(1);
    const lines = r.stdout.trimEnd().split('\n');
    // openpyxl kept no results, so nothing saved shows the old value: the row and column checks name the cell.
    expect(lines[0]).toBe(
      'Results!L7, worklist row 7, sample "KB-03 Footbridge", column "Sample Vol (mL)": changed after writing (its row check and column check no longer match): ' +
        'the cell holds 900; the value as written is not kept in the workbook (the saving program recalculated or dropped the results that showed it)',
    );
    expect(lines[1]).toMatch(/^Results!AL7, worklist row 7, sample "KB-03 Footbridge", row check: stored "[0-9a-f]{16}", expected "[0-9a-f]{16}"$/);
    expect(lines).toContain('Summary!T17, mean E %: stored 99.98786757959796, expected 99.98815441777488');
    expect(r.stderr).toMatch(/: \d+ differences; the integrity digest does not match/);
  });

  it('two inputs typed over in two rows and columns (openpyxl): each row names both candidate cells', () => {
    const changed = join(dir, 'two-inputs-changed.xlsx');
    openpyxlSave(workbook, changed, `ws('Results')['L7'] = 900; ws('Results')['K9'] = 2.5`);
    const r = runCli(['verify', changed]);
    expect(r.code).toBe(1);
    const lines = r.stdout.trimEnd().split('\n').filter((l) => /^Results!(K|L)\d+,/.test(l));
    expect(lines).toEqual([
      expect.stringMatching(/^Results!K7, .*: this cell or L7 changed after writing \(the row check names the row, the column checks columns K, L\): the cell holds 358\.3;/),
      expect.stringMatching(/^Results!L7, .*: this cell or K7 changed after writing .*: the cell holds 900;/),
      expect.stringMatching(/^Results!K9, worklist row 9, sample "KB-05 Ford", .*: this cell or L9 changed after writing .*: the cell holds 2\.5;/),
      expect.stringMatching(/^Results!L9, .*: this cell or K9 changed after writing .*: the cell holds 1000;/),
    ]);
  });

  it('an input typed over where the saving program kept the results as written (exceljs): the cell with both values', async () => {
    const changed = join(dir, 'input-changed-exceljs.xlsx');
    const { editCopy } = await import('../verify/workbook-fixtures.js');
    await editCopy(workbook, changed, (wb) => {
      wb.getWorksheet('Results')!.getCell('L7').value = 900;
    });
    const r = runCli(['verify', changed]);
    expect(r.code).toBe(1);
    expect(r.stdout.split('\n')[0]).toBe(
      'Results!L7, worklist row 7, sample "KB-03 Footbridge", column "Sample Vol (mL)": typed over after writing: the cell holds 900; ' +
        'when written, the formulas read it as 1000 mL (the saved result of Results!V7)',
    );
  });

  it('a computed cell changed (openpyxl), then saved by LibreOffice: exit 1, its formula and both values', async () => {
    const changed = join(dir, 'computed-changed.xlsx');
    openpyxlSave(workbook, changed, `ws('Results')['AI7'] = 0.5`);
    const saved = await recalcWithLibreOffice(changed);
    const r = runCli(['verify', saved]);
    expect(r.code).toBe(1);
    expect(r.stdout).toMatch(
      /^Results!AI7, worklist row 7, sample "KB-03 Footbridge", pre_extraction_conc \[ug\/L\]: the formula was replaced by a value: stored 0\.5, expected =IF\(OR\(U7="".* giving 0\.3583\d*$/m,
    );
  }, 120_000);

  it('recalc, a sign-off typed, LibreOffice, signed twice, LibreOffice again: both signatures valid and trusted; a later edit fails them', async () => {
    const typed = join(dir, 'to-sign.xlsx');
    openpyxlSave(workbook, typed, `p = ws('Provenance'); p.cell(row=row_of(p, 'prepared by'), column=2, value='A. Quill')`);
    const first = await recalcWithLibreOffice(typed);
    const s1 = runCli(['sign', first, '--key', keys.analyst!.key, '--signer', 'Ada Quill, analyst']);
    expect(s1.code, s1.stderr).toBe(0);
    expect(s1.stderr).toMatch(/^phasebook sign: .*: signed by "Ada Quill, analyst" at \d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ with the key [0-9a-f]{64} \(signature 1 on the Signatures sheet\)\n$/);
    const second = await recalcWithLibreOffice(first);
    const s2 = runCli(['sign', second, '--key', keys.reviewer!.key, '--signer', 'Bo Reyes, reviewer']);
    expect(s2.code, s2.stderr).toBe(0);
    const final = await recalcWithLibreOffice(second);

    const r = runCli(['verify', final, '--trust', keys.analyst!.pub, '--trust', keys.reviewer!.pub]);
    expect(r.code, r.stdout).toBe(0);
    const lines = r.stdout.trimEnd().split('\n');
    expect(lines[0]).toMatch(/^Signatures!A5, signature by "Ada Quill, analyst" at \S+, key [0-9a-f]{64}: valid, by a trusted key$/);
    expect(lines[1]).toMatch(/^Signatures!A6, signature by "Bo Reyes, reviewer" at \S+, key [0-9a-f]{64}: valid, by a trusted key$/);
    expect(lines[2]).toMatch(/^Provenance!B\d+, sign-off "prepared by" \(typed, not checked\): "A\. Quill"$/);
    expect(r.stderr).toMatch(/untouched: .*; 2 signatures, all valid and trusted\n$/);

    // The same as one JSON document.
    const json = JSON.parse(runCli(['verify', final, '--json', '--trust', keys.analyst!.pub, '--trust', keys.reviewer!.pub]).stdout);
    expect(json).toMatchObject({ exit_code: 0, untouched: true, digest_matches: true, differences: [] });
    expect(json.signatures.map((s: { signer: string; valid: boolean; trusted: boolean }) => [s.signer, s.valid, s.trusted])).toEqual([
      ['Ada Quill, analyst', true, true],
      ['Bo Reyes, reviewer', true, true],
    ]);
    expect(json.signatures[0].key_fingerprint).toMatch(/^[0-9a-f]{64}$/);
    expect(json.sign_off).toEqual([{ cell: expect.stringMatching(/^Provenance!B\d+$/), label: 'prepared by', text: 'A. Quill' }]);

    // Only one of the two keys trusted: exit 1, and the other named.
    const one = runCli(['verify', final, '--trust', keys.analyst!.pub]);
    expect(one.code).toBe(1);
    expect(one.stdout).toMatch(/^Signatures!A6, signature by "Bo Reyes, reviewer" .*: valid, by a key not given with --trust$/m);
    expect(one.stderr).toMatch(/; 2 signatures: 1 valid and trusted, 1 by a key not given with --trust\n$/);
    // A key trusted that signed nothing: exit 1.
    const none = runCli(['verify', final, '--trust', keys.stranger!.pub]);
    expect(none.code).toBe(1);
    expect(none.stdout).toContain('Signatures: no valid signature by a key given with --trust');

    // Changed after signing (openpyxl, then LibreOffice): both signatures fail, the cell is named, exit 1.
    const edited = join(dir, 'signed-then-changed.xlsx');
    openpyxlSave(final, edited, `ws('Results')['K7'] = 0.4`);
    const after = await recalcWithLibreOffice(edited);
    const v = runCli(['verify', after, '--trust', keys.analyst!.pub, '--trust', keys.reviewer!.pub]);
    expect(v.code).toBe(1);
    expect(v.stdout).toMatch(/^Signatures!A5, signature by "Ada Quill, analyst" .*: not valid: it does not match the content and the signatures before it \(changed since it was signed\?\), by a trusted key$/m);
    expect(v.stdout).toMatch(/^Signatures!A6, signature by "Bo Reyes, reviewer" .*: not valid: /m);
    expect(v.stdout).toMatch(/^Results!AL7, worklist row 7, sample "KB-03 Footbridge", row check: /m);
    expect(v.stderr).toMatch(/; 2 signatures: 2 not valid\n$/);

    // sign refuses a workbook that no longer verifies, and leaves it as it was.
    const before = readFileSync(after);
    const refused = runCli(['sign', after, '--key', keys.reviewer!.key, '--signer', 'Bo Reyes, reviewer']);
    expect(refused.code).toBe(2);
    expect(refused.stderr).toMatch(/^phasebook: .*: was not signed: it does not verify \(\d+ differences\); run "phasebook verify .*" to see them\n$/);
    expect(readFileSync(after).equals(before)).toBe(true);
  }, 300_000);
});
