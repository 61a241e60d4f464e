/**
 * Real exports read right (issue 13), through the built CLI: one invented plasma run
 * written as comma, semicolon (decimal comma, CRLF, BOM) and tab text, and as XLSX by
 * exceljs, openpyxl and LibreOffice (tests/fixtures/exports/make-exports.mjs), must read
 * to the same numbers, the same flags and the same exit code, every export; non-detect
 * words are results; the results CSV speaks the worklist's dialect.
 *
 * Expected values are computed here, independently of src/: D = K·f with f = 1/(1 +
 * 10^(pKa − pH)) for a base (Harvey, Modern Analytical Chemistry §7.7), E = 1 − (V_aq/(V_aq
 * + D·V_org))^n (IUPAC Gold Book F02503), C0 = C_extract × dilution × V_recon / (V_plasma × E).
 */
import { readFileSync, readdirSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeExports, ROWS } from '../fixtures/exports/make-exports.mjs';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';
import { skipWithout } from '../helpers/tools.js';

const METHOD = join(ROOT, 'tests/fixtures/exports/brackwater-plasma.yaml');
const ANALYTES: Record<string, { logK: number; pka: number }> = { halvamine: { logK: 1.2, pka: 9.6 }, 'nor-halvamine': { logK: 0.9, pka: 10.2 } };
const efficiency = (analyte: string, plasmaUl: number, solventMl: number, n: number) => {
  const a = ANALYTES[analyte]!;
  const d = 10 ** a.logK / (1 + 10 ** (a.pka - 12));
  return 1 - (plasmaUl / (plasmaUl + d * solventMl * 1000)) ** n;
};

let dir: string;
let files: Record<string, string>;
let missing: string[];
beforeAll(async () => {
  dir = tempDir('phasebook-exports-');
  ({ files, missing } = await makeExports(join(dir, 'in')));
}, 300_000);
afterAll(() => rmSync(dir, { recursive: true, force: true }));

interface Run {
  code: number | null;
  stderr: string;
  csv: string;
  rows: Record<string, string>[];
}
const runs = new Map<string, Run>();
function run(name: string): Run {
  const known = runs.get(name);
  if (known) return known;
  const out = join(dir, 'out', name);
  const r = runCli(['recalc', files[name]!, '-m', METHOD, '-o', out, '--outputs', 'csv,xlsx', '--timestamp', '2026-12-04T12:00:00Z']);
  const csvFile = readdirSync(out).find((f) => f.endsWith('.results.csv'))!;
  const csv = readFileSync(join(out, csvFile), 'utf8');
  const delimiter = name.endsWith('.csv') && name.startsWith('semicolon') ? ';' : name.startsWith('tab') ? '\t' : ',';
  const rows = Papa.parse<Record<string, string>>(csv.replace(/^\uFEFF/, ''), { header: true, skipEmptyLines: 'greedy', delimiter }).data;
  const result = { code: r.code, stderr: r.stderr, csv, rows };
  runs.set(name, result);
  return result;
}
const num = (text: string | undefined) => (text === undefined || text === '' ? NaN : Number(text.replace(',', '.')));

const TEXT = ['comma.csv', 'semicolon.csv', 'tab.txt'];
const SHEETS = ['exceljs.xlsx', 'openpyxl.xlsx', 'libreoffice.xlsx'];

describe.each([...TEXT, ...SHEETS])('%s', (name) => {
  it('reads every row to the same concentrations, computed independently here', (ctx) => {
    if (name === 'openpyxl.xlsx' && skipWithout('openpyxl (python3-openpyxl)', !missing.includes('openpyxl'))) ctx.skip();
    if (name === 'libreoffice.xlsx' && skipWithout('LibreOffice', !missing.includes('LibreOffice'))) ctx.skip();
    const r = run(name);
    expect(r.rows).toHaveLength(ROWS.length);
    ROWS.forEach((row, i) => {
      const got = num(r.rows[i]!['pre_extraction_conc [ng/mL]']);
      if (row.code === 'Cal Std') {
        // A calibrator is carried: in the output as written, no computed cell, no flag, no status.
        expect([got, r.rows[i]!.flags, r.rows[i]!.qc_status, r.rows[i]!['Extract Conc (ng/mL)'] ?? r.rows[i]!['Extract Conc (ng/ml)'] ?? r.rows[i]!['Extract Conc (ng / mL)']]).toEqual([NaN, '', '', name.startsWith('semicolon') ? String(row.extract).replace('.', ',') : String(row.extract)]);
        return;
      }
      if (typeof row.extract === 'object') {
        expect(got, `${row.id} ${row.analyte}`).toBeNaN(); // not detected: no concentration, never a made-up 0
        return;
      }
      const want = (row.extract * row.dilution * row.recon) / (row.plasma * efficiency(row.analyte, row.plasma, row.solvent, row.portions));
      expect(Math.abs(got - want) / want, `${row.id} ${row.analyte}`).toBeLessThan(1e-12);
    });
  });

  it('flags the non-detects, judges them as the chemistry says, and exits 0', (ctx) => {
    if (name === 'openpyxl.xlsx' && missing.includes('openpyxl') && !process.env.CI) ctx.skip();
    if (name === 'libreoffice.xlsx' && missing.includes('LibreOffice') && !process.env.CI) ctx.skip();
    const r = run(name);
    const byId = (id: string, analyte: string) => r.rows[ROWS.findIndex((x) => x.id === id && x.analyte === analyte)]!;
    // A blank not detected is clean: it passes, and qualifies nothing.
    expect([byId('BLK-1', 'halvamine').flags, byId('BLK-1', 'halvamine').qc_status]).toEqual(['NOT_DETECTED', 'pass']);
    // A sample not detected is below its reporting limit.
    expect(byId('BW-102', 'halvamine').flags).toBe('BELOW_RL;NOT_DETECTED');
    expect(byId('BW-102', 'nor-halvamine').flags).toBe('BELOW_RL;NOT_DETECTED');
    // Non-detects raise no exit code by themselves: every QC passes.
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('Batch verdict: PASS: every control passed and no row has an input error');
  });
});

describe('the dialect out is the dialect in', () => {
  it('a semicolon worklist with decimal commas and a BOM gives the same', () => {
    const r = run('semicolon.csv');
    expect(r.csv.startsWith('\uFEFFSample ID;Sample Type;')).toBe(true);
    const line = r.csv.split('\n')[4]!; // QC-L1 halvamine
    expect(line.startsWith('QC-L1;QC Low;R-0412;halvamine;6,12;200;1;2;100;1;3;')).toBe(true);
    expect(line).toMatch(/;3,06\d+;102,0\d+;;pass;3,06$/); // reported_result with the input's decimal comma
    expect(r.stderr).toContain('Numbers read with decimal comma, from the file (');
  });

  it('a comma worklist gives a comma file with decimal points', () => {
    const r = run('comma.csv');
    expect(r.csv.split('\n')[4]!.startsWith('QC-L1,QC Low,R-0412,halvamine,6.12,200,1,2,100,1,3,')).toBe(true);
  });
});

describe('a stated limit', () => {
  it('"< 0.5" is read as not detected below 0.5 ng/mL, named in the flag', () => {
    const r = runCli(['recalc', files['comma.csv']!, '-m', METHOD, '-o', join(dir, 'out', 'json'), '--outputs', 'csv', '--json']);
    const doc = JSON.parse(r.stdout);
    expect(doc.exit_code).toBe(0);
    // The flags themselves are in the workbook's Flags sheet; the terminal and --json list only failures.
    expect(doc.failed_controls).toEqual([]);
  });
});

describe('type codes carry their QC level; units as labs type them', () => {
  it('"QC Low" is a qc row at level low, and the level meets its own limits and the run rule', async () => {
    const { recalculate } = await import('../../src/index.js');
    const result = await recalculate(files['comma.csv']!, { method: METHOD });
    const levels = result.table.texts.get('qc_level')!;
    const types = result.table.sampleType;
    expect(ROWS.map((_, i) => (types[i] === 'qc' ? `${types[i]}:${levels[i]}` : types[i]))).toEqual(
      ROWS.map((row) => (row.code.startsWith('QC ') ? `qc:${row.code.slice(3).toLowerCase()}` : row.code === 'Cal Std' ? 'calibrator' : row.code === 'Blank' ? 'blank' : 'sample')),
    );
    expect(result.qc.runRule.map((o) => o.levels.map((l) => l.level).sort())).toEqual([['high', 'low', 'mid'], ['high', 'low', 'mid']]);
  });

  it('cm³ (superscript three), μL (Greek mu) and "ng / mL" are read as cm^3, uL and ng/mL', () => {
    const r = run('tab.txt');
    expect(r.code, r.stderr).toBe(0);
    expect(r.csv.split('\n')[0]!.startsWith('Sample ID\tSample Type\tRun\tAnalyte\tExtract Conc (ng / mL)\tPlasma (cm³)')).toBe(true);
  });
});

describe('verify, with calibrators, QC levels from type codes and non-detects', () => {
  it.each(['comma.csv', 'semicolon.csv', 'exceljs.xlsx'])('the workbook from %s verifies untouched', (name) => {
    run(name);
    const out = join(dir, 'out', name);
    const workbook = join(out, readdirSync(out).find((f) => f.endsWith('.xlsx'))!);
    const v = runCli(['verify', workbook]);
    expect(v.code, v.stdout + v.stderr).toBe(0);
  });
});

describe('a qc_level cell that says another level than its type code', () => {
  it('is an input error naming both', async () => {
    const { recalculateData } = await import('../../src/index.js');
    const csv = readFileSync(files['comma.csv']!, 'utf8').split('\n');
    csv[0] += ',QC Level';
    for (let i = 1; i < csv.length; i++) if (csv[i]) csv[i] += i === 4 ? ',high' : ',';
    const result = await recalculateData(csv.join('\n'), { method: METHOD });
    // Row 5 of the file (QC-L1, halvamine): its code says low, its qc_level cell says high.
    const flags = result.flags.filter((f) => f.row === 3 && f.code === 'INPUT_ERROR');
    expect(flags.map((f) => f.message)).toEqual(['row 5, column "QC Level": expected the level its type code "QC Low" carries (low) or an empty cell, got "high"']);
    // The other QC rows take the level their code carries.
    expect(result.table.texts.get('qc_level')![4]).toBe('mid');
  });
});

describe('method check --worklist', () => {
  it('shows which column feeds each field, what defaults, and what goes unused', () => {
    const r = runCli(['method', 'check', METHOD, '--worklist', files['tab.txt']!]);
    expect(r.code, r.stderr).toBe(0);
    const feeds = r.stdout.slice(r.stdout.indexOf('Worklist '));
    expect(feeds).toContain('sample_volume    column "Plasma (cm³)", in cm³, read as uL');
    expect(feeds).toContain('extract_conc     column "Extract Conc (ng / mL)", in ng / mL\n');
    expect(feeds).toContain('final_volume     column "Reconst. (μL)", in μL\n');
    expect(feeds).toContain('qc_level         no column: empty');
    expect(feeds).toContain('partition_coeff  no column: the method\'s analyte data (halvamine 15.848931924611133, nor-halvamine 7.943282347242816)');
    expect(feeds).toContain('Every column feeds a field.');
  });
});
