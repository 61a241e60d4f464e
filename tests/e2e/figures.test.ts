/**
 * `phasebook figures` end to end: 30 invented batches recorded into a QC history through
 * the built CLI (`recalc --history`), then `figures --json` checked against the figures
 * computed here, independently, from the numbers written into the worklists.
 *
 * Worklists use the canonical headers of the generic method with sample_volume 100 mL,
 * final_volume 1 mL and no partition coefficient (E = 100 %), so a row's result is its
 * extract_conc / 100 (DESIGN.md §4). lcs: spike 1 ng/mL, recovery = extract_conc. ms/msd:
 * spike 1 ng/mL on a native sample of extract P, recovery = (extract − P) / 100 / 1 × 100.
 */
import { mkdirSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import ExcelJS from 'exceljs';
import { runCli, tempDir } from '../helpers/cli.js';
import { T_099, mean, rms, sd } from '../helpers/reference-stats.js';
import { mulberry32 } from '../../samples/seeded-random.mjs';

let root: string;
let history: string;
const BATCHES = 30;

const round = (x: number, digits: number) => Number(x.toFixed(digits));

interface Invented {
  lcs: number[];
  spikeRecoveries: number[];
  mdl: number[];
  blanks: number[];
  blanksNotDetected: number;
}
const invented: Record<string, Invented> = {};

const HEADER = 'sample_id,sample_type,parent_id,batch_id,analyte,extract_conc,sample_volume,solvent_volume,extractions,final_volume,spike_conc';

function batchRows(i: number, rand: () => number): string[] {
  const lines: string[] = [];
  const row = (id: string, type: string, parent: string, analyte: string, extract: string, spike: string) =>
    lines.push([id, type, parent, `B${i}`, analyte, extract, '100', '10', '1', '1', spike].join(','));
  for (const analyte of ['Atrazine', 'Simazine']) {
    const inv = (invented[analyte] ??= { lcs: [], spikeRecoveries: [], mdl: [], blanks: [], blanksNotDetected: 0 });
    const tag = `${analyte.slice(0, 3).toUpperCase()}`;
    // Atrazine's blank is not detected in every third batch; Simazine's always gives a number (some below 0).
    if (analyte === 'Atrazine' && i % 3 === 0) {
      row(`B${i}-${tag}-BLK`, 'blank', '', analyte, 'ND', '');
      inv.blanksNotDetected++;
    } else {
      const b = round(analyte === 'Atrazine' ? rand() * 0.9 - 0.1 : rand() * 1.2 - 0.2, 3);
      row(`B${i}-${tag}-BLK`, 'blank', '', analyte, String(b), '');
      inv.blanks.push(b / 100);
    }
    const lcs = round(92 + rand() * 16, 2);
    row(`B${i}-${tag}-LCS`, 'lcs', '', analyte, String(lcs), '1');
    inv.lcs.push(lcs);
    const native = round(20 + rand() * 10, 2);
    row(`B${i}-${tag}-S1`, 'sample', '', analyte, String(native), '');
    for (const type of ['ms', 'msd']) {
      const spiked = round(native + 88 + rand() * 24, 2);
      row(`B${i}-${tag}-${type.toUpperCase()}`, type, `B${i}-${tag}-S1`, analyte, String(spiked), '1');
      inv.spikeRecoveries.push(((spiked / 100 - native / 100) / 1) * 100);
    }
    const mdl = round(4 + rand() * 2, 3);
    row(`B${i}-${tag}-MDL`, 'mdl', '', analyte, String(mdl), '0.05');
    inv.mdl.push(mdl / 100);
  }
  return lines;
}

// The method: the generic one, with the spike's uncertainty stated for Atrazine only.
const METHOD_TEXT = `${readFileSync(resolve('templates/generic-lle.yaml'), 'utf8')}
analytes:
  Atrazine: { spike_uncertainty_pct: 1.2 }
  Simazine: {}
`;

beforeAll(() => {
  root = tempDir('phasebook-figures-');
  history = join(root, 'qc.sqlite');
  const method = join(root, 'lab-lle.yaml');
  writeFileSync(method, METHOD_TEXT);
  const rand = mulberry32(20261204);
  for (let i = 1; i <= BATCHES; i++) {
    const worklist = join(root, `run-${i}.csv`);
    writeFileSync(worklist, [HEADER, ...batchRows(i, rand)].join('\n') + '\n');
    const out = join(root, `out-${i}`);
    mkdirSync(out);
    const day = new Date(Date.UTC(2026, 0, 1 + 7 * i, 15)).toISOString();
    const r = runCli(['recalc', worklist, '-m', method, '-o', out, '--outputs', 'csv', '--history', history, '--timestamp', day, '--quiet']);
    if (r.code !== 0) throw new Error(`batch ${i}: exit ${r.code}: ${r.stderr}`);
  }
}, 300_000);
afterAll(() => rmSync(root, { recursive: true, force: true }));

// Independent arithmetic (not the code under test): tests/helpers/reference-stats.ts.
const T_29 = T_099[29]!;

function figures(args: string[] = []) {
  const r = runCli(['figures', '--history', history, '--until', '2026-12-31', ...args]);
  return r;
}

describe('figures --json over 30 recorded batches', () => {
  let doc: {
    runs: number;
    since: string;
    until: string;
    figures: Array<{
      method: string;
      analyte: string;
      uncertainty: Record<string, number | string | null>;
      mdl: Record<string, unknown>;
    }>;
  };
  beforeAll(() => {
    const r = figures(['--json']);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    doc = JSON.parse(r.stdout);
  });

  it('covers the 24 months up to --until, every run, one entry per analyte of the method', () => {
    expect(doc).toMatchObject({ runs: 30, since: '2024-12-31T23:59:59.999Z', until: '2026-12-31T23:59:59.999Z' });
    expect(doc.figures.map((f) => [f.method, f.analyte])).toEqual([
      ['generic-lle', 'Atrazine'],
      ['generic-lle', 'Simazine'],
    ]);
  });

  it.each(['Atrazine', 'Simazine'])('gives the Nordtest uncertainty of %s as computed here (TR 537 formulas)', (analyte) => {
    const f = doc.figures.find((x) => x.analyte === analyte)!;
    const inv = invented[analyte]!;
    const uCref = analyte === 'Atrazine' ? 1.2 : 0;
    const uRw = sd(inv.lcs);
    const uBias = Math.sqrt(rms(inv.spikeRecoveries) ** 2 + uCref ** 2);
    const uc = Math.sqrt(uRw ** 2 + uBias ** 2);
    expect(Object.keys(f.uncertainty).slice(0, 7)).toEqual(['u_rw_pct', 'u_bias_pct', 'u_c_pct', 'U_pct', 'k', 'n_rw', 'n_bias']);
    expect(f.uncertainty).toMatchObject({ k: 2, n_rw: 30, n_bias: 60, u_cref_pct: uCref, u_cref_source: analyte === 'Atrazine' ? 'method' : 'default' });
    expect(f.uncertainty.u_rw_pct).toBeCloseTo(uRw, 9);
    expect(f.uncertainty.u_bias_pct).toBeCloseTo(uBias, 9);
    expect(f.uncertainty.u_c_pct).toBeCloseTo(uc, 9);
    expect(f.uncertainty.U_pct).toBeCloseTo(2 * uc, 9);
  });

  it('gives the detection limit of Atrazine: some blanks not detected, so MDL_b is the highest blank', () => {
    const f = doc.figures.find((x) => x.analyte === 'Atrazine')!;
    const inv = invented.Atrazine!;
    const mdlS = T_29 * sd(inv.mdl);
    const mdlB = Math.max(...inv.blanks);
    expect(f.mdl).toMatchObject({ n_spikes: 30, n_blanks: 30, unit: 'ng/mL', blanks_rule: 'highest' });
    expect(f.mdl.mdl_s as number).toBeCloseTo(mdlS, 4);
    expect(f.mdl.mdl_b as number).toBeCloseTo(mdlB, 12);
    expect(f.mdl.mdl as number).toBeCloseTo(Math.max(mdlS, mdlB), 4);
  });

  it('gives the detection limit of Simazine: every blank numerical, so MDL_b = mean + t(29, 0.99)·s', () => {
    const f = doc.figures.find((x) => x.analyte === 'Simazine')!;
    const inv = invented.Simazine!;
    const mdlS = T_29 * sd(inv.mdl);
    const mdlB = Math.max(0, mean(inv.blanks)) + T_29 * sd(inv.blanks);
    expect(f.mdl).toMatchObject({ n_spikes: 30, n_blanks: 30, unit: 'ng/mL', blanks_rule: 'mean_plus_t_s' });
    expect(f.mdl.mdl_s as number).toBeCloseTo(mdlS, 4);
    expect(f.mdl.mdl_b as number).toBeCloseTo(mdlB, 4);
    expect(f.mdl.mdl as number).toBeCloseTo(Math.max(mdlS, mdlB), 4);
  });
});

describe('figures: the period and the text', () => {
  it('counts only the runs in --since … --until, and says how many more points a figure needs', () => {
    // Batches are a week apart from 2026-01-08: to 2026-03-31 holds batches 1–12.
    const r = figures(['--since', '2026-01-01', '--until', '2026-03-31', '--json']);
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.runs).toBe(12);
    const a = doc.figures[0];
    expect(a.uncertainty).toMatchObject({ u_rw_pct: null, U_pct: null, n_rw: 12, more_rw_needed: 8, n_bias: 24, more_bias_needed: 0 });
  });

  it('prints each figure in words with its source', () => {
    const r = figures();
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/^Figures from .*qc\.sqlite: 30 runs from 2024-12-31T23:59:59\.999Z to 2026-12-31T23:59:59\.999Z\.\n/);
    expect(r.stdout).toContain('generic-lle, Atrazine (ng/mL)');
    expect(r.stdout).toMatch(/Measurement uncertainty \(Nordtest TR 537\), lcs and matrix spikes: U [\d.]+ % \(k = 2\)/);
    expect(r.stdout).toContain('u(Cref) 1.2 % as the method states');
    expect(r.stdout).toContain('u(Cref) 0 %: the method states no spike_uncertainty_pct');
    expect(r.stdout).toMatch(/Method detection limit \(40 CFR 136 App\. B Rev\. 2\): MDL [\d.]+ ng\/mL/);
  });

  it.each([
    [['--until', '2026-02-30'], '--until: expected a date such as 2026-01-31 or an ISO 8601 time such as 2026-01-31T12:00:00Z, got "2026-02-30"'],
    [['--since', 'last year'], '--since: expected a date such as 2026-01-31 or an ISO 8601 time such as 2026-01-31T12:00:00Z, got "last year"'],
    [['--since', '2026-06-01', '--until', '2026-05-01'], 'is after --until'],
  ])('refuses %j with a clear message', (args, message) => {
    const r = runCli(['figures', '--history', history, ...args]);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(message);
  });
});

describe('recalc --history: each sample result with its expanded uncertainty', () => {
  const T31 = '2026-08-20T15:00:00.000Z';
  let out: string;
  let expectedPct: Record<string, number>;
  let csv: string[][];
  beforeAll(() => {
    // What the history gives before this run: the figures up to its time.
    const before = JSON.parse(figures(['--until', T31, '--json']).stdout);
    expectedPct = Object.fromEntries(before.figures.map((f: { analyte: string; uncertainty: { U_pct: number } }) => [f.analyte, f.uncertainty.U_pct]));
    const worklist = join(root, 'run-31.csv');
    writeFileSync(
      worklist,
      [
        HEADER,
        'S31-1,sample,,B31,Atrazine,41.5,100,10,1,1,',
        'S31-2,sample,,B31,Simazine,12.25,100,10,1,1,',
        'S31-3,sample,,B31,Atrazine,ND,100,10,1,1,',
        'B31-BLK,blank,,B31,Atrazine,0.2,100,10,1,1,',
        'B31-LCS,lcs,,B31,Atrazine,99.1,100,10,1,1,1',
      ].join('\n') + '\n',
    );
    out = join(root, 'out-31');
    const r = runCli(['recalc', worklist, '-m', join(root, 'lab-lle.yaml'), '-o', out, '--history', history, '--timestamp', T31, '--quiet']);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    csv = readFileSync(join(out, 'run-31.results.csv'), 'utf8').trim().split('\n').map((l) => l.split(','));
  }, 120_000);

  it('puts U (in the result\'s unit) and k beside the concentrations of the results CSV', () => {
    const header = csv[0]!;
    const at = (name: string) => header.indexOf(name);
    expect(at('expanded_uncertainty [ng/mL]')).toBeGreaterThan(at('pre_extraction_conc [ng/mL]'));
    expect(at('coverage_factor')).toBe(at('expanded_uncertainty [ng/mL]') + 1);
    const rows = Object.fromEntries(csv.slice(1).map((r) => [r[0], r]));
    for (const [id, analyte, extract] of [['S31-1', 'Atrazine', 41.5], ['S31-2', 'Simazine', 12.25]] as const) {
      const result = extract / 100; // E = 100 %, 1 mL from 100 mL (file comment)
      expect(Number(rows[id]![at('pre_extraction_conc [ng/mL]')])).toBeCloseTo(result, 12);
      // U = U % × result / 100 (Nordtest U is relative), U % as figures gave it for the history before this run.
      expect(Number(rows[id]![at('expanded_uncertainty [ng/mL]')])).toBeCloseTo((expectedPct[analyte]! / 100) * result, 12);
      expect(rows[id]![at('coverage_factor')]).toBe('2');
    }
    // A non-detect has no number to carry a U; controls carry none.
    for (const id of ['S31-3', 'B31-BLK', 'B31-LCS']) expect(rows[id]![at('expanded_uncertainty [ng/mL]')]).toBe('');
  });

  it('lists the U and its source on the Method sheet and the report, and the workbook verifies', () => {
    const report = readFileSync(join(out, readdirSync(out).find((f) => f.endsWith('.report.html'))!), 'utf8');
    expect(report).toContain('<h2>Results with their expanded uncertainty</h2>');
    expect(report).toMatch(/Atrazine<\/strong>: U = [\d.]+ % of the result \(k = 2\), Nordtest TR 537 from the QC history .*qc\.sqlite, runs of 2024-08-20 to 2026-08-20: u\(Rw\) from 30 lcs recoveries, bias from 60 ms and msd recoveries; u\(Cref\) 1\.2 %/);
    // A chart per analyte of the recoveries behind its U (30 lcs and 60 matrix spikes), drawn inline as SVG.
    for (const analyte of ['Atrazine', 'Simazine']) {
      const figure = new RegExp(`<figure class="chart" data-chart="uncertainty" data-analyte="${analyte}" data-points="90" data-layer="figure_points">\\s*<svg[\\s\\S]*?figure_points_marks[\\s\\S]*?</svg>`);
      expect(report).toMatch(figure);
    }
    const v = runCli(['verify', join(out, 'run-31.xlsx')]);
    expect(v.stderr + v.stdout).not.toContain('differ');
    expect(v.code).toBe(0);
  });

  it('lists the recoveries behind each U, and verify derives the U again from them', async () => {
    const wb = new ExcelJS.Workbook();
    await wb.xlsx.readFile(join(out, 'run-31.xlsx'));
    const ws = wb.getWorksheet('Method')!;
    let title = 0;
    ws.eachRow((row, r) => {
      if (row.getCell(1).value === 'Recoveries behind the expanded uncertainty (from the QC history)') title = r;
    });
    expect(title).toBeGreaterThan(0);
    expect(ws.getRow(title + 3).values).toEqual([, 'analyte', 'sample type', 'qc level', 'recovery %', 'run time', 'worklist', 'batch', 'sample id']);
    // 30 runs × (1 lcs + 2 matrix spikes) per analyte.
    let points = 0;
    for (let r = title + 4; ws.getRow(r).getCell(1).value; r++) points++;
    expect(points).toBe(2 * 30 * 3);
    // The first point is an lcs recovery of Atrazine, as invented: change it, and the U no longer follows.
    const first = ws.getRow(title + 4);
    expect([first.getCell(1).value, first.getCell(2).value, first.getCell(4).value]).toEqual(['Atrazine', 'lcs', invented.Atrazine!.lcs[0]]);
    first.getCell(4).value = 150;
    const edited = join(out, 'edited.xlsx');
    await wb.xlsx.writeFile(edited);
    const v = runCli(['verify', edited]);
    expect(v.code).toBe(1);
    expect(v.stdout).toMatch(/Method!B\d+, .*U % of the result: stored [\d.]+, expected [\d.]+/);
    expect(v.stdout).toMatch(/Results!\w+2, worklist row 2, sample "S31-1", expanded_uncertainty \[ng\/mL\]: stored [\d.]+, expected [\d.]+/);
  });
});
