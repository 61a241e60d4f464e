/**
 * End to end over the built CLI: samples/qc-failures-2026-12.csv (invented scenario)
 * with its method holds at least one failure of every kind of DESIGN.md §5 / issue 3.
 * Run `npm run build` (or `npm test`, which builds first) so dist/ is current.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import ExcelJS from 'exceljs';
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const ROOT = fileURLToPath(new URL('../..', import.meta.url));
const CLI = join(ROOT, 'dist/cli.js');
const WORKLIST = 'samples/qc-failures-2026-12.csv';
const METHOD = 'samples/qc-failures-2026-12.method.yaml';

// [sample_id, analyte, flags, qc_status] for every row, in worklist order.
const EXPECTED: Array<[string, string, string, string]> = [
  ['P1-MB', 'carbamazepine', 'BLANK_HIT', 'fail'], // 0.8 ng/mL ≥ RL 0.5
  ['P1-LCS', 'carbamazepine', 'REC_HIGH', 'fail'], // 135 %
  ['P1-LCSD', 'carbamazepine', '', 'pass'], // 128 %, RPD 5.4 % against P1-LCS
  ['S-101', 'carbamazepine', 'LCS_ASSOC;MATRIX_ASSOC;BLANK_ASSOC', ''],
  ['S-102', 'carbamazepine', 'BELOW_RL;LCS_ASSOC;BLANK_ASSOC', ''], // 0.2 ng/mL < RL 0.5
  ['S-103', 'carbamazepine', 'OVER_RANGE;LCS_ASSOC;BLANK_ASSOC', ''], // extract 1190 > 1000 ng/mL
  ['S-104', 'carbamazepine', 'INPUT_ERROR', ''], // sample volume 0: no result, so not qualified
  ['S-101-MS', 'carbamazepine', 'REC_LOW', 'fail'], // 50 %
  ['S-101-MSD', 'carbamazepine', 'RPD_HIGH', 'fail'], // 95 %, RPD 29.5 % against the ms
  ['S-105-DUP', 'carbamazepine', 'NO_PARENT', 'fail'], // S-105 is not in the worklist
  ['P1-MB', 'diazepam', '', 'pass'],
  ['P1-LCS', 'diazepam', '', 'pass'],
  ['P1-LCSD', 'diazepam', '', 'pass'],
  ['S-101', 'diazepam', '', ''],
  ['S-102', 'diazepam', '', ''],
  ['S-101-MS', 'diazepam', '', 'pass'],
  ['S-101-MSD', 'diazepam', '', 'pass'],
  ['S-102-DUP', 'diazepam', '', 'pass'],
  ['P2-MB', 'carbamazepine', '', 'pass'],
  ['P2-LCS', 'carbamazepine', '', 'pass'],
  ['P2-QCL-1', 'carbamazepine', '', 'pass'],
  ['P2-QCL-2', 'carbamazepine', 'REC_LOW', 'fail'], // 80 % < 85 %
  ['P2-QCL-3', 'carbamazepine', 'REC_LOW', 'fail'], // 82 %: 1 of 3 low qc pass, so the run rule rejects P2
  ['P2-QCM-1', 'carbamazepine', '', 'pass'],
  ['P2-QCM-2', 'carbamazepine', '', 'pass'],
  ['P2-QCM-3', 'carbamazepine', '', 'pass'],
  ['P2-QCM-4', 'carbamazepine', '', 'pass'],
  ['P2-QCM-5', 'carbamazepine', '', 'pass'],
  ['P2-QCM-6', 'carbamazepine', 'OUTLIER', 'pass'], // 112 % among ~100 %: Grubbs outlier, within 85–115 %
  ['P2-QCH-1', 'carbamazepine', '', 'pass'],
  ['P2-QCH-2', 'carbamazepine', '', 'pass'],
  ['P2-QCH-3', 'carbamazepine', '', 'pass'],
  ['S-201', 'carbamazepine', '', ''],
  ['P2-QCX', 'carbamazepine', 'INPUT_ERROR', 'fail'], // extract "n/a"
];

describe('phasebook recalc over a worklist with every kind of QC failure', () => {
  let out: string;
  let status: number | null;
  let stderr: string;
  let rows: Record<string, string>[];
  let headers: string[];

  beforeAll(() => {
    if (!existsSync(CLI)) throw new Error('dist/cli.js is missing: run `npm run build` first (npm test does)');
    out = mkdtempSync(join(tmpdir(), 'phasebook-qc-e2e-'));
    const res = spawnSync(process.execPath, [CLI, 'recalc', WORKLIST, '-m', METHOD, '-o', out, '--outputs', 'csv', '--timestamp', '2026-12-03T18:00:00Z'], {
      cwd: ROOT,
      encoding: 'utf8',
    });
    status = res.status;
    stderr = res.stderr;
    const csv = readFileSync(join(out, 'qc-failures-2026-12.results.csv'), 'utf8');
    const parsed = Papa.parse<Record<string, string>>(csv, { header: true, skipEmptyLines: 'greedy' });
    expect(parsed.errors).toEqual([]);
    rows = parsed.data;
    headers = parsed.meta.fields ?? [];
  });

  afterAll(() => {
    if (out) rmSync(out, { recursive: true, force: true });
  });

  it('exits 1 (written, with QC failures and row errors)', () => {
    expect(status).toBe(1);
  });

  it('writes every row, in order, with flags, qc_status and reported_result last', () => {
    expect(rows.map((r) => [r.sample_id, r.analyte])).toEqual(EXPECTED.map(([id, a]) => [id, a]));
    expect(headers.slice(-3)).toEqual(['flags', 'qc_status', expect.stringMatching(/^reported_result \[.+\]$/)]);
  });

  it.each(EXPECTED.map((e, i) => [i + 2, ...e] as const))('row %i (%s, %s): flags "%s", qc_status "%s"', (rowNumber, _id, _a, flags, qcStatus) => {
    const row = rows[rowNumber - 2]!;
    expect(row.flags).toBe(flags);
    expect(row.qc_status).toBe(qcStatus);
  });

  it('covers every flag code and a run-rule rejection', () => {
    const seen = new Set(rows.flatMap((r) => (r.flags ? r.flags.split(';') : [])));
    for (const code of ['REC_LOW', 'REC_HIGH', 'RPD_HIGH', 'BLANK_HIT', 'BELOW_RL', 'OVER_RANGE', 'OUTLIER', 'NO_PARENT', 'INPUT_ERROR', 'LCS_ASSOC', 'MATRIX_ASSOC', 'BLANK_ASSOC']) {
      expect(seen.has(code), code).toBe(true);
    }
    expect(stderr).toContain('run rule rejects the run');
  });

  it('computes the recoveries and RPD the reviewer can re-derive', () => {
    // E = 1 − (V_aq/(V_aq + K·V_org))^n = 1 − 1/121 for K = 30, 1 mL + 4 mL, one portion (IUPAC Gold Book F02503);
    // C0 = C_extract × V_final/(V_aq × E); %R = (C_ms − C_parent)/spike × 100 (US EPA SW-846).
    const e = 1 - 1 / 121;
    const c0 = (extract: number) => (extract * 0.5) / (1 * e);
    const byId = (id: string) => rows.find((r) => r.sample_id === id && r.analyte === 'carbamazepine')!;
    expect(Number(byId('P1-LCS').spike_recovery_pct)).toBeCloseTo((c0(133.9) * 100) / 50, 9);
    expect(Number(byId('S-101-MS').spike_recovery_pct)).toBeCloseTo(((c0(128.9) - c0(79.34)) * 100) / 50, 9);
    const ms = c0(128.9);
    const msd = c0(173.6);
    expect(Number(byId('S-101-MSD').rpd_pct)).toBeCloseTo((Math.abs(ms - msd) * 200) / (ms + msd), 9);
    expect(byId('S-105-DUP').rpd_pct).toBe(''); // NO_PARENT: RPD stays empty
    expect(byId('S-104')['pre_extraction_conc [ng/mL]']).toBe(''); // input error: computed cells empty
  });

  it('prints one line per failed analyte and the batch verdict on stderr', () => {
    const lines = stderr.trimEnd().split('\n');
    expect(lines[0]).toMatch(/^phasebook: read 34 rows from samples\/qc-failures-2026-12\.csv with method qc-failures-demo; 2 rows with input errors; 27 control rows, 8 failed; wrote /);
    expect(lines.slice(1)).toEqual([
      'Numbers read with decimal point, from the file (132 cells such as "133.9"), no digit grouping.',
      '  FAIL batch P1, carbamazepine: BLANK_HIT: blank "P1-MB"; REC_HIGH: lcs "P1-LCS"; REC_LOW: ms "S-101-MS"; RPD_HIGH: msd "S-101-MSD"; NO_PARENT: dup "S-105-DUP"; INPUT_ERROR: sample "S-104"',
      '  FAIL batch P2, carbamazepine: INPUT_ERROR: qc "P2-QCX"; run rule rejects the run: 1 of 3 qc rows at level low pass, fewer than 50 %; failed: qc "P2-QCL-2" (REC_LOW), qc "P2-QCL-3" (REC_LOW)',
      'Failed controls (8):',
      '  blank "P1-MB", carbamazepine, batch P1: BLANK_HIT: row 2, column "pre_extraction_conc": blank at or above the reporting limit: expected below 0.5 ng/mL, got "0.800113 ng/mL"',
      '  lcs "P1-LCS", carbamazepine, batch P1: REC_HIGH: row 3, column "spike_recovery_pct": recovery above its limit: expected 70–130 %, got "135.016 %"',
      '  ms "S-101-MS", carbamazepine, batch P1: REC_LOW: row 9, column "spike_recovery_pct": recovery below its limit: expected 70–130 %, got "49.973 %"',
      '  msd "S-101-MSD", carbamazepine, batch P1: RPD_HIGH: row 10, column "rpd_pct": RPD above its limit: expected at most 20 %, got "29.5537 %"',
      '  dup "S-105-DUP", carbamazepine, batch P1: NO_PARENT: row 11, column "parent_id": expected parent_id to name a sample row of carbamazepine, got "S-105"',
      '  qc low "P2-QCL-2", carbamazepine, batch P2: REC_LOW: row 23, column "spike_recovery_pct": recovery below its limit: expected 85–115 %, got "79.9944 %"',
      '  qc low "P2-QCL-3", carbamazepine, batch P2: REC_LOW: row 24, column "spike_recovery_pct": recovery below its limit: expected 85–115 %, got "81.9943 %"',
      '  qc mid "P2-QCX", carbamazepine, batch P2: INPUT_ERROR: row 35, column "extract_conc": expected a number, got "n/a"',
      'Batch verdict: FAIL: 8 controls failed and 2 rows have an input error',
    ]);
  });
});

describe('exit code when only qc rows the run rule accepts have failed', () => {
  // ICH M10: 5 of 6 qc rows pass and each level has at least 50 % → the run is accepted, so the verdict
  // passes; the failed qc row still fails its own status, and any failed control means exit 1 (issue 3 §10).
  it('prints a PASS verdict, names the failed qc row everywhere, and exits 1', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'phasebook-qc-e2e-'));
    try {
      const head = 'sample_id,sample_type,batch_id,analyte,extract_conc,sample_volume,solvent_volume,spike_conc,qc_level';
      const qc = (id: string, found: number, level: string) => `${id},qc,R1,metoprolol,${found},1,1,10,${level}`;
      const csv = [head, 'S-1,sample,R1,metoprolol,4.2,1,1,,', qc('QL1', 10, 'low'), qc('QL2', 8, 'low'), qc('QM1', 10, 'mid'), qc('QM2', 10.2, 'mid'), qc('QH1', 9.9, 'high'), qc('QH2', 10.1, 'high')].join('\n');
      const worklist = join(dir, 'accepted-run.csv');
      writeFileSync(worklist, csv + '\n');
      if (!existsSync(CLI)) throw new Error('dist/cli.js is missing: build first');
      const res = spawnSync(process.execPath, [CLI, 'recalc', worklist, '-m', 'templates/generic-lle.yaml', '-o', join(dir, 'out'), '--outputs', 'csv,xlsx,html'], { cwd: ROOT, encoding: 'utf8' });
      // The run rule accepts the run, so the verdict is PASS; but the failed qc row is named with its value and
      // limit, and the words say "accepted with failed QCs", never "every control passed" (issue 14).
      expect(res.stderr.trimEnd().split('\n').slice(1)).toEqual([
        'Numbers read with decimal point, from the file (4 cells such as "4.2"), no digit grouping.',
        'Failed controls (1):',
        '  qc low "QL2", metoprolol, batch R1 (tolerated by the run rule): REC_LOW: row 4, column "spike_recovery_pct": recovery below its limit: expected 85–115 %, got "80 %"',
        'Batch verdict: PASS: run accepted with failed QCs: the run rule accepts the run, but 1 qc row failed',
      ]);
      // The workbook's first sheet and the report say the same.
      const wb = new ExcelJS.Workbook();
      await wb.xlsx.readFile(join(dir, 'out', 'accepted-run.xlsx'));
      const summary = wb.getWorksheet('Summary')!;
      const cellsOf = (ws: ExcelJS.Worksheet) => {
        const texts: string[] = [];
        ws.eachRow((row) => row.eachCell((c) => texts.push(String(c.text))));
        return texts;
      };
      const texts = cellsOf(summary);
      expect(texts).toContain('run accepted with failed QCs: the run rule accepts the run, but 1 qc row failed');
      expect(texts).not.toContain('every control passed and no row has an input error');
      expect(texts).toContain('failed; the run rule accepts the run');
      expect(texts.some((t) => t.includes('REC_LOW: row 4, column "spike_recovery_pct": recovery below its limit: expected 85–115 %, got "80 %"'))).toBe(true);
      const report = readFileSync(join(dir, 'out', 'accepted-run.R1.report.html'), 'utf8');
      expect(report).toContain('<span id="headline">run accepted with failed QCs: the run rule accepts the run, but 1 qc row failed</span>');
      expect(report).toContain('<strong>QL2</strong> (qc low), metoprolol, tolerated by the run rule: REC_LOW: row 4');
      expect(res.stderr).toContain('7 rows from');
      expect(res.stderr).toContain('6 control rows, 1 failed');
      expect(res.status).toBe(1);
      const rows = Papa.parse<Record<string, string>>(readFileSync(join(dir, 'out', 'accepted-run.results.csv'), 'utf8'), { header: true, skipEmptyLines: 'greedy' }).data;
      expect(rows.map((r) => r.qc_status)).toEqual(['', 'pass', 'fail', 'pass', 'pass', 'pass', 'pass']);
      expect(rows.map((r) => r.flags)).toEqual(['', '', 'REC_LOW', '', '', '', '']);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
