import { createHash } from 'node:crypto';
import { existsSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import ExcelJS from 'exceljs';
import Papa from 'papaparse';
import { beforeAll, describe, expect, it } from 'vitest';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';

const FORMS = join(ROOT, 'tests/fixtures/forms');
const GENERIC = join(ROOT, 'templates/generic-lle.yaml');
const COMPUTED = ['distribution_ratio', 'extraction_efficiency_pct', 'pre_extraction_conc [ng/mL]', 'spike_recovery_pct', 'rpd_pct'];

function readCsv(path: string, delimiter = ','): Record<string, string>[] {
  const parsed = Papa.parse<Record<string, string>>(readFileSync(path, 'utf8'), { header: true, skipEmptyLines: 'greedy', delimiter });
  return parsed.data;
}

/** The canonical worklist written as an XLSX the way a lab's spreadsheet would hold it. */
async function writeXlsxForm(path: string): Promise<void> {
  const rows = Papa.parse<string[]>(readFileSync(join(FORMS, 'canonical.csv'), 'utf8'), { skipEmptyLines: 'greedy' }).data;
  const wb = new ExcelJS.Workbook();
  const ws = wb.addWorksheet('Run 1');
  ws.addRow(rows[0]);
  rows.slice(1).forEach((r, i) => {
    const cells = r.map((v, c) => {
      if (c < 5 || c === 14 || c === 16 || v === '') return v === '' ? null : v; // ids and words stay text
      const x = Number(v);
      if (Number.isNaN(x)) return v;
      if (c === 6 && i === 1) return String(x); // a number stored as text
      if (c === 11 && i === 0) return { formula: '1+2', result: x }; // a formula cell: its cached value is read
      return x;
    });
    ws.addRow(cells);
  });
  await wb.xlsx.writeFile(path);
}

describe('recalc end to end on the four input forms', () => {
  const out = tempDir();
  const runs: Record<string, { code: number | null; stderr: string; rows: Record<string, string>[] }> = {};

  beforeAll(async () => {
    const xlsx = join(out, 'xlsx-form.xlsx');
    await writeXlsxForm(xlsx);
    const inputs = {
      canonical: join(FORMS, 'canonical.csv'),
      units: join(FORMS, 'units-in-headers.csv'),
      semicolon: join(FORMS, 'semicolon-decimal-comma.csv'),
      xlsx,
    };
    for (const [name, path] of Object.entries(inputs)) {
      const dir = join(out, name);
      const r = runCli(['recalc', path, '--method', GENERIC, '--out', dir, '--timestamp', '2026-11-20T16:00:00Z']);
      const csv = readdirSync(dir).find((f) => f.endsWith('.results.csv'))!;
      // The semicolon worklist gives a semicolon results CSV with decimal commas (the same dialect out as in).
      runs[name] = { code: r.status ?? r.code, stderr: r.stderr, rows: readCsv(join(dir, csv), name === 'semicolon' ? ';' : ',') };
    }
  });

  it('every form exits 1 (one row has an input error) and keeps all 12 rows in order', () => {
    for (const [name, run] of Object.entries(runs)) {
      expect(run.code, name).toBe(1);
      expect(run.rows.map((r) => r.sample_id ?? r['sample_id']), name).toEqual([
        '007', 'A-01', "'=SUM(A1)", 'LCS-1', 'LCS-1D', 'A-01 MS', 'A-01 MSD', 'A-01 DUP', 'Q1', 'Q2', 'Q3', 'BAD',
      ]);
    }
  });

  it('all four forms give the same computed values (to 1e-12 relative) and the same flags', () => {
    const base = runs.canonical!.rows;
    for (const name of ['units', 'semicolon', 'xlsx']) {
      const rows = runs[name]!.rows;
      rows.forEach((row, i) => {
        for (const col of COMPUTED) {
          const a = base[i]![col]!;
          const b = row[col]!;
          if (a === '') expect(b, `${name} row ${i} ${col}`).toBe('');
          else expect(Math.abs(Number(b.replace(',', '.')) - Number(a)) / Math.abs(Number(a)), `${name} row ${i} ${col}`).toBeLessThan(1e-12);
        }
        expect(row.flags, `${name} row ${i}`).toBe(base[i]!.flags);
        expect(row.qc_status, `${name} row ${i}`).toBe(base[i]!.qc_status);
      });
    }
  });

  it('weak acid at pH = pKa: Harvey §7.7 (REFERENCES.md E4) D = 1.500, E = 60.00 %, so 6 ng/mL in 50 mL from 50 mL is 10 ng/mL', () => {
    const row = runs.canonical!.rows[0]!;
    expect(Number(row.distribution_ratio)).toBeCloseTo(1.5, 12);
    expect(Number(row.extraction_efficiency_pct)).toBeCloseTo(60, 10);
    expect(Number(row['pre_extraction_conc [ng/mL]'])).toBeCloseTo(10, 10);
  });

  it('no K: E = 100 %, and the dilution and final volume enter the mass balance (12.5 × 2 × 1 / 100)', () => {
    const row = runs.canonical!.rows[1]!;
    expect(row.distribution_ratio).toBe('');
    expect(row.extraction_efficiency_pct).toBe('100');
    expect(Number(row['pre_extraction_conc [ng/mL]'])).toBeCloseTo(0.25, 14);
  });

  it('recovery and RPD by the US EPA SW-846 forms, on pre-extraction concentrations', () => {
    const rows = runs.canonical!.rows;
    expect(Number(rows[3]!.spike_recovery_pct)).toBeCloseTo(9.5, 12); // 95 × 1 / 100 = 0.95 ng/mL of 10 spiked
    // ms: (110·2/100 − 12.5·2/100) / 10 × 100 = 19.5 %
    expect(Number(rows[5]!.spike_recovery_pct)).toBeCloseTo(19.5, 10);
    // msd vs ms: |2.36 − 2.20| / 2.28 × 100
    expect(Number(rows[6]!.rpd_pct)).toBeCloseTo((0.16 / 2.28) * 100, 10);
    expect(rows[6]!.flags).toBe('REC_LOW');
  });

  it('text stays text: a leading zero kept, a leading "=" neutralised in the CSV', () => {
    expect(runs.canonical!.rows[0]!.sample_id).toBe('007');
    expect(runs.canonical!.rows[2]!.sample_id).toBe("'=SUM(A1)");
  });

  it('the bad row keeps its place with INPUT_ERROR and empty computed cells', () => {
    const row = runs.canonical!.rows[11]!;
    expect(row.flags).toBe('INPUT_ERROR');
    for (const col of COMPUTED) expect(row[col]).toBe('');
    expect(runs.canonical!.stderr).toMatch(/read 12 rows .* 1 row with input errors/);
  });
});

describe('the demo and the basics of the CLI', () => {
  it('the shipped demo passes with exit 0 and writes both outputs', () => {
    const out = tempDir();
    const r = runCli(['recalc', 'samples/kestrel-brook-2026-11.csv', '--method', 'templates/surface-water.yaml', '--out', out]);
    expect(r.stderr).toMatch(/Batch verdict: PASS/);
    expect(r.code).toBe(0);
    expect(readdirSync(out).sort()).toEqual([
      'kestrel-brook-2026-11.MB-2611-A.report.html',
      'kestrel-brook-2026-11.results.csv',
      'kestrel-brook-2026-11.xlsx',
    ]);
  });

  it('--version prints the package version; --help lists recalc', () => {
    const pkg = JSON.parse(readFileSync(join(ROOT, 'package.json'), 'utf8')) as { version: string };
    expect(runCli(['--version']).stdout.trim()).toBe(pkg.version);
    const help = runCli(['--help']);
    expect(help.code).toBe(0);
    expect(help.stdout).toMatch(/recalc/);
  });

  it('exit 2 naming the output folder when a file stands in its way', () => {
    const out = tempDir();
    const blocker = join(out, 'results');
    writeFileSync(blocker, 'not a folder');
    const r = runCli(['recalc', join(FORMS, 'canonical.csv'), '--method', GENERIC, '--out', blocker]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`phasebook: ${blocker}: cannot create the output folder: a file of that name is in the way`);
  });

  it('exit 2 with a located message and nothing written when a required column is missing', () => {
    const out = tempDir();
    const bad = join(out, 'no-volume.csv');
    writeFileSync(bad, 'sample_id,analyte,extract_conc,solvent_volume\na,x,1,10\n');
    const before = createHash('sha256').update(readFileSync(bad)).digest('hex');
    const r = runCli(['recalc', bad, '--method', GENERIC, '--out', join(out, 'o')]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`${bad}, row 1: missing the required column "sample_volume"`);
    expect(existsSync(join(out, 'o', 'no-volume.results.csv'))).toBe(false);
    expect(createHash('sha256').update(readFileSync(bad)).digest('hex')).toBe(before);
  });
});
