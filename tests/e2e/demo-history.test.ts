/**
 * The shipped demo histories (samples/demo-history.mjs, `npm run demo:history`): the script
 * writes 60 invented worklists and records them through the built CLI; this test reads the
 * worklists it wrote and derives every figure here, independently of phasebook's code:
 *
 * - each result by the textbook mass balance (Harris, *Quantitative Chemical Analysis*,
 *   extraction chapter): D = K·f with f = 1/(1 + 10^(pH − pKa)) for an acid and
 *   1/(1 + 10^(pKa − pH)) for a base; E = 1 − (V_aq / (V_aq + D·V_org))^n; C = extract ×
 *   dilution × V_final / (V_aq × E); recoveries C/spike × 100 and (C − C_parent)/spike × 100;
 * - the Nordtest TR 537 uncertainty (Magnusson et al., ed. 4, 2017): u(Rw) = s (n − 1) of the
 *   lcs recoveries, RMS_bias = √(Σ(Rᵢ − 100)²/n) over ms and msd, u(bias) = √(RMS_bias² +
 *   u(Cref)²), U = 2·√(u(Rw)² + u(bias)²); a qc level: u(bias) = √((mean − 100)² + s²/n);
 * - the MDL of 40 CFR 136 Appendix B Rev. 2 (EPA 821-R-16-006): MDL_s = t(n − 1, 0.99)·S_s;
 *   MDL_b the highest blank when some are not detected, X̄ (0 if negative) + t·S_b when all
 *   are numerical, not applicable when none is; MDL the larger. t from the published one-sided
 *   Student t table: t(14, 0.99) = 2.624, t(29, 0.99) = 2.462 (from memory, three decimals,
 *   hence the relative tolerance of 5e-4 on the MDLs).
 *
 * Then a later `recalc --history` of the quick start's worklist and of the plasma demo puts the
 * expanded uncertainty beside each sample result.
 */
import { spawnSync } from 'node:child_process';
import { readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Papa from 'papaparse';
import { parse as parseYaml } from 'yaml';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';
import { T_099, mean, rms, sd } from '../helpers/reference-stats.js';

let root: string;
let history: string;
let worklists: string;

type Row = Record<string, string>;
const readCsv = (path: string): Row[] => Papa.parse<Row>(readFileSync(path, 'utf8'), { header: true, skipEmptyLines: true }).data;

beforeAll(() => {
  root = tempDir('phasebook-demo-history-');
  const r = spawnSync(process.execPath, [join(ROOT, 'samples/demo-history.mjs'), '--out', join(root, 'demo')], { cwd: root, encoding: 'utf8', timeout: 280_000 });
  if (r.status !== 0) throw new Error(`demo-history exit ${r.status}: ${r.stderr}`);
  history = join(root, 'demo', 'qc-history.db');
  worklists = join(root, 'demo', 'worklists');
}, 300_000);
afterAll(() => rmSync(root, { recursive: true, force: true }));

// Independent arithmetic: tests/helpers/reference-stats.ts.
const T_TABLE = T_099;
const nearRel = (actual: unknown, expected: number, rel: number) => {
  expect(typeof actual).toBe('number');
  expect(Math.abs((actual as number) - expected)).toBeLessThanOrEqual(rel * Math.abs(expected));
};

interface Chem {
  k: number;
  pka?: number;
  acidBase?: string;
  ph?: number;
}
function methodAnalytes(file: string): Map<string, Chem> {
  const m = parseYaml(readFileSync(join(ROOT, 'templates', file), 'utf8')) as { analytes: Record<string, { partition_coeff?: number; log_k?: number; pka?: number; acid_base?: string; ph?: number }> };
  return new Map(Object.entries(m.analytes).map(([name, a]) => [name, { k: a.partition_coeff ?? 10 ** a.log_k!, pka: a.pka, acidBase: a.acid_base, ph: a.ph }]));
}
function efficiency(c: Chem, ph: number | undefined, vAq: number, vOrg: number, n: number): number {
  let f = 1;
  const at = ph ?? c.ph;
  if (c.acidBase === 'acid') f = 1 / (1 + 10 ** (at! - c.pka!));
  if (c.acidBase === 'base') f = 1 / (1 + 10 ** (c.pka! - at!));
  const d = c.k * f;
  return 1 - (vAq / (vAq + d * vOrg)) ** n;
}

interface Points {
  lcs: number[];
  matrix: number[];
  mdl: number[];
  blanks: number[];
  blanksNd: number;
  levels: Map<string, number[]>;
}
const points = (): Points => ({ lcs: [], matrix: [], mdl: [], blanks: [], blanksNd: 0, levels: new Map() });

/** The surface-water worklists, read as the lab wrote them (the method's headers and codes). */
function surfaceWater(): Map<string, Points> {
  const chem = methodAnalytes('surface-water.yaml');
  const out = new Map<string, Points>();
  for (const file of readdirSync(worklists).filter((f) => f.startsWith('kestrel-brook-'))) {
    const rows = readCsv(join(worklists, file));
    const conc = (r: Row) => {
      const e = efficiency(chem.get(r.Compound!)!, r['Extraction pH'] ? Number(r['Extraction pH']) : undefined, Number(r['Sample Vol (mL)']), Number(r['DCM per Portion (mL)']), Number(r.Portions));
      return (Number(r['Extract Result (ng/mL)']) * Number(r.Dilution) * Number(r['Final Vol (mL)'])) / (Number(r['Sample Vol (mL)']) * e);
    };
    for (const r of rows) {
      const p = out.get(r.Compound!) ?? out.set(r.Compound!, points()).get(r.Compound!)!;
      const spike = Number(r['Spike Added (ug/L)']);
      if (r['QC Code'] === 'BS') p.lcs.push((conc(r) / spike) * 100);
      if (r['QC Code'] === 'MS' || r['QC Code'] === 'MSD') {
        const parent = rows.find((x) => x['Sample Name'] === r['Spiked From'] && x.Compound === r.Compound)!;
        p.matrix.push(((conc(r) - conc(parent)) / spike) * 100);
      }
      if (r['QC Code'] === 'mdl') p.mdl.push(conc(r));
      if (r['QC Code'] === 'MB') {
        if (r['Extract Result (ng/mL)'] === 'ND') p.blanksNd++;
        else p.blanks.push(conc(r));
      }
    }
  }
  return out;
}

/** The plasma worklists: qc recoveries per level. */
function plasma(): Map<string, Points> {
  const chem = methodAnalytes('plasma-amitriptyline.yaml');
  const out = new Map<string, Points>();
  for (const file of readdirSync(worklists).filter((f) => f.startsWith('tarnmoor-'))) {
    for (const r of readCsv(join(worklists, file))) {
      if (r.Type !== 'QC') continue;
      const p = out.get(r.Analyte!) ?? out.set(r.Analyte!, points()).get(r.Analyte!)!;
      const vAq = Number(r['Plasma Vol [µL]']);
      const e = efficiency(chem.get(r.Analyte!)!, undefined, vAq, Number(r['Hexane-IAA Vol [µL]']), 1);
      const c = (Number(r['Extract Conc (ng/mL)']) * Number(r.Dil) * Number(r['Recon Vol [µL]'])) / (vAq * e);
      const level = r['QC Level']!.toLowerCase();
      (p.levels.get(level) ?? p.levels.set(level, []).get(level)!).push((c / Number(r['Nominal (ng/mL)'])) * 100);
    }
  }
  return out;
}

function nordtest(rw: number[], bias: number[]) {
  const uRw = sd(rw);
  const uBias = rms(bias);
  const uc = Math.sqrt(uRw ** 2 + uBias ** 2);
  return { uRw, uBias, uc, U: 2 * uc };
}
function nordtestLevel(xs: number[]) {
  const uRw = sd(xs);
  const uBias = Math.sqrt((mean(xs) - 100) ** 2 + sd(xs) ** 2 / xs.length);
  const uc = Math.sqrt(uRw ** 2 + uBias ** 2);
  return { uRw, uBias, uc, U: 2 * uc };
}

interface FigureJson {
  method: string;
  analyte: string;
  uncertainty: Record<string, number | null | string>;
  levels: Array<{ level: string; uncertainty: Record<string, number | null> }>;
  mdl: Record<string, unknown>;
}

describe('the demo histories: figures --json as derived here from the generated worklists', () => {
  let doc: { runs: number; figures: FigureJson[] };
  let water: Map<string, Points>;
  beforeAll(() => {
    const r = runCli(['figures', '--history', history, '--until', '2026-10-31', '--json']);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    doc = JSON.parse(r.stdout);
    water = surfaceWater();
  });

  it('holds the 30 surface-water batches and the 30 plasma runs, one entry per method and analyte', () => {
    expect(readdirSync(worklists)).toHaveLength(60);
    expect(doc.runs).toBe(60);
    expect(doc.figures.map((f) => `${f.method}/${f.analyte}`)).toEqual([
      'plasma-amitriptyline/Amitriptyline',
      'plasma-amitriptyline/Nortriptyline',
      'surface-water/2,4-Dichlorophenol',
      'surface-water/Naphthalene',
      'surface-water/Quinoline',
    ]);
  });

  it.each(['2,4-Dichlorophenol', 'Quinoline', 'Naphthalene'])('surface water, %s: the Nordtest uncertainty (TR 537)', (analyte) => {
    const f = doc.figures.find((x) => x.method === 'surface-water' && x.analyte === analyte)!;
    const p = water.get(analyte)!;
    const want = nordtest(p.lcs, p.matrix);
    expect(f.uncertainty).toMatchObject({ k: 2, n_rw: 30, n_bias: 60, u_cref_pct: 0, u_cref_source: 'default' });
    expect(f.uncertainty.u_rw_pct).toBeCloseTo(want.uRw, 9);
    expect(f.uncertainty.u_bias_pct).toBeCloseTo(want.uBias, 9);
    expect(f.uncertainty.U_pct).toBeCloseTo(want.U, 9);
  });

  it.each([
    ['2,4-Dichlorophenol', 'highest'],
    ['Quinoline', 'mean_plus_t_s'],
    ['Naphthalene', 'not_applicable'],
  ])('surface water, %s: the MDL of 40 CFR 136 App. B Rev. 2, blanks by the rule "%s"', (analyte, rule) => {
    const f = doc.figures.find((x) => x.method === 'surface-water' && x.analyte === analyte)!;
    const p = water.get(analyte)!;
    expect(p.mdl).toHaveLength(15);
    const mdlS = T_TABLE[14]! * sd(p.mdl);
    let mdlB = NaN;
    if (rule === 'highest') {
      expect(p.blanksNd).toBeGreaterThan(0);
      expect(p.blanks.length).toBeGreaterThan(0);
      mdlB = Math.max(...p.blanks);
    } else if (rule === 'mean_plus_t_s') {
      expect(p.blanksNd).toBe(0);
      mdlB = Math.max(0, mean(p.blanks)) + T_TABLE[29]! * sd(p.blanks);
    } else {
      expect(p.blanks).toHaveLength(0);
    }
    expect(f.mdl).toMatchObject({ n_spikes: 15, n_blanks: 30, unit: 'ug/L', blanks_rule: rule });
    nearRel(f.mdl.mdl_s, mdlS, 5e-4);
    if (Number.isNaN(mdlB)) expect(f.mdl.mdl_b).toBeNull();
    else nearRel(f.mdl.mdl_b, mdlB, rule === 'highest' ? 1e-12 : 5e-4);
    nearRel(f.mdl.mdl, Number.isNaN(mdlB) ? mdlS : Math.max(mdlS, mdlB), 5e-4);
  });

  it.each(['Amitriptyline', 'Nortriptyline'])('plasma, %s: each qc level its own uncertainty (TR 537, one reference material)', (analyte) => {
    const f = doc.figures.find((x) => x.method === 'plasma-amitriptyline' && x.analyte === analyte)!;
    const levels = plasma().get(analyte)!.levels;
    expect(f.levels.map((l) => l.level)).toEqual(['lloq', 'low', 'mid', 'high']); // concentration order, as every output lists levels
    for (const l of f.levels) {
      const xs = levels.get(l.level)!;
      expect(xs).toHaveLength(90);
      const want = nordtestLevel(xs);
      expect(l.uncertainty.n_rw).toBe(90);
      expect(l.uncertainty.u_rw_pct).toBeCloseTo(want.uRw, 9);
      expect(l.uncertainty.u_bias_pct).toBeCloseTo(want.uBias, 9);
      expect(l.uncertainty.U_pct).toBeCloseTo(want.U, 9);
    }
    // No lcs or matrix spikes in a bioanalytical run: that route gives no U and says what it lacks.
    expect(f.uncertainty).toMatchObject({ U_pct: null, n_rw: 0, more_rw_needed: 20 });
  });

  it('prints the figures in words: per qc level for the plasma method, the lcs and matrix spike route for surface water', () => {
    const r = runCli(['figures', '--history', history, '--until', '2026-10-31']);
    expect(r.code).toBe(0);
    const block = (head: string) => r.stdout.slice(r.stdout.indexOf(head)).split('\n\n')[0]!;
    const ami = block('plasma-amitriptyline, Amitriptyline (ng/mL)');
    expect(ami).toContain('Measurement uncertainty (Nordtest TR 537), per qc level (no lcs or matrix spikes recorded); u(Cref) 0 %');
    expect(ami).not.toContain('more lcs recoveries');
    expect(ami).toMatch(/qc level lloq: U [\d.]+ % \(k = 2\)/);
    const quinoline = block('surface-water, Quinoline (ug/L)');
    expect(quinoline).toMatch(/lcs and matrix spikes: U [\d.]+ % \(k = 2\), u_c [\d.]+ %, u\(Rw\) [\d.]+ % from 30 lcs recoveries, u\(bias\) [\d.]+ % from 60 ms and msd recoveries/);
    expect(quinoline).toMatch(/MDL [\d.]+ ug\/L, the larger of MDL_s [\d.]+ from 15 mdl spikes and MDL_b [\d.]+ from 30 blanks \(every blank numerical/);
  });

  it('makes the same worklists every time (a fixed seed)', () => {
    const again = join(root, 'again');
    const r = spawnSync(process.execPath, [join(ROOT, 'samples/demo-history.mjs'), '--out', again, '--worklists-only'], { encoding: 'utf8' });
    expect(r.status).toBe(0);
    for (const f of readdirSync(worklists)) expect(readFileSync(join(again, 'worklists', f), 'utf8')).toBe(readFileSync(join(worklists, f), 'utf8'));
  });

  it('refuses a folder it did not make', () => {
    const r = spawnSync(process.execPath, [join(ROOT, 'samples/demo-history.mjs'), '--out', worklists], { encoding: 'utf8' });
    expect(r.status).toBe(2);
    expect(r.stderr).toContain('exists and was not made by this script: expected a new folder (give --out)');
  });
});

describe('plan --target-mdl on the demo history', () => {
  it('estimates the sample volume for a target from MDL_s (mass balance: MDL ∝ 1 / sample volume), with the procedure\'s caveat', () => {
    const p = surfaceWater().get('Quinoline')!;
    const mdlS = T_TABLE[14]! * sd(p.mdl); // 40 CFR 136 App. B Rev. 2, t from the published table
    const target = Number((mdlS / 2).toPrecision(2));
    const r = runCli(['plan', '--target-mdl', String(target), '--history', history, '--analyte', 'quinoline', '--sample-volume', '1000', '--until', '2026-10-31', '--json']);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    const plan = JSON.parse(r.stdout);
    expect(plan).toMatchObject({ method: 'surface-water', analyte: 'Quinoline', unit: 'ug/L', outcome: 'scaled', sampleVolume: 1000 });
    nearRel(plan.neededSampleVolume, (1000 * mdlS) / target, 5e-4);
    const text = runCli(['plan', '--target-mdl', String(target), '--history', history, '--analyte', 'Quinoline', '--sample-volume', '1000', '--until', '2026-10-31']).stdout;
    expect(text).toContain('40 CFR 136 App. B Rev. 2 asks for the MDL to be determined again after such a change. This is an estimate to plan that determination, not an MDL.');
  });

  it('refuses where the blanks set a floor above the target (2,4-Dichlorophenol: MDL_b is its highest blank)', () => {
    const p = surfaceWater().get('2,4-Dichlorophenol')!;
    const target = Number((Math.max(...p.blanks) * 0.9).toPrecision(2));
    const r = runCli(['plan', '--target-mdl', String(target), '--history', history, '--analyte', '2,4-Dichlorophenol', '--sample-volume', '1000', '--until', '2026-10-31']);
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('No sample volume to propose: MDL_b');
    expect(r.stdout).toContain('from the method blanks, is at or above the target');
  });

  it('says what is missing where the history has no MDL (the plasma runs have no mdl rows)', () => {
    const r = runCli(['plan', '--target-mdl', '0.5', '--history', history, '--analyte', 'Amitriptyline', '--sample-volume', '0.2', '--until', '2026-10-31']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('no present MDL for "Amitriptyline" (method "plasma-amitriptyline") to plan from: 7 more low-level spiked blanks (type mdl) needed: 7 at least, 0 recorded');
  });
});

describe('a later recalc --history: each sample result with its expanded uncertainty', () => {
  const LATER = '2026-11-20T10:00:00Z';
  it('the quick start worklist: U = U % of its analyte × |result| / 100, k = 2', () => {
    const out = join(root, 'later-water');
    const r = runCli(['recalc', 'samples/kestrel-brook-2026-11.csv', '-m', 'templates/surface-water.yaml', '-o', out, '--outputs', 'csv', '--history', history, '--timestamp', LATER, '--quiet']);
    expect(r.stderr).toBe('');
    const water = surfaceWater();
    const rows = readCsv(join(out, 'kestrel-brook-2026-11.results.csv'));
    let checked = 0;
    for (const row of rows) {
      const u = row['expanded_uncertainty [ug/L]'];
      const p = water.get(row.Compound!);
      if (row['QC Code'] !== 'SAMP' || !p) {
        // Controls, and the surrogate (no figures), carry none.
        expect(u).toBe('');
        continue;
      }
      const x = Number(row['pre_extraction_conc [ug/L]']);
      expect(Number(u)).toBeCloseTo((nordtest(p.lcs, p.matrix).U / 100) * Math.abs(x), 12);
      expect(row.coverage_factor).toBe('2');
      checked++;
    }
    expect(checked).toBe(15); // five river samples × three analytes
  });

  it('a method that asks for it (reporting.with_uncertainty) reports "x ± U", and the workbook verifies', () => {
    const method = join(root, 'surface-water-with-u.yaml');
    // The same method (its name is what the history's runs are matched by) with the reporting option added.
    writeFileSync(method, readFileSync(join(ROOT, 'templates/surface-water.yaml'), 'utf8').replace('qc:\n', 'reporting:\n  with_uncertainty: true\n\nqc:\n'));
    const out = join(root, 'later-water-u');
    const r = runCli(['recalc', 'samples/kestrel-brook-2026-11.csv', '-m', method, '-o', out, '--outputs', 'csv,xlsx', '--history', history, '--timestamp', LATER, '--quiet']);
    expect(r.stderr).toBe('');
    let shown = 0;
    for (const row of readCsv(join(out, 'kestrel-brook-2026-11.results.csv'))) {
      const reported = row['reported_result [ug/L]']!;
      const u = Number(row['expanded_uncertainty [ug/L]']);
      if (row['expanded_uncertainty [ug/L]'] === '' || reported.startsWith('<') || reported.startsWith('>')) {
        expect(reported).not.toContain('±');
        continue;
      }
      // GUM (JCGM 100:2008) 7.2.6: U to two significant digits, the result to the same decimal place (no ties here).
      const u2 = Number(u.toPrecision(2));
      const decimals = Math.max(0, 1 - Math.floor(Math.log10(u2)));
      expect(reported).toBe(`${Number(row['pre_extraction_conc [ug/L]']).toFixed(decimals)} ± ${u2.toFixed(decimals)}`);
      shown++;
    }
    expect(shown).toBeGreaterThan(10);
    const v = runCli(['verify', join(out, 'kestrel-brook-2026-11.xlsx')]);
    expect(v.stdout + v.stderr).not.toContain('differ');
    expect(v.code).toBe(0);
  });

  it('the plasma demo: the largest U among the qc levels, which cannot understate a sample', () => {
    const out = join(root, 'later-plasma');
    const r = runCli(['recalc', 'samples/tarnmoor-tmr204-run07.csv', '-m', 'templates/plasma-amitriptyline.yaml', '-o', out, '--outputs', 'csv', '--history', history, '--timestamp', LATER, '--quiet']);
    expect(r.stderr).toBe('');
    const levels = plasma();
    let checked = 0;
    for (const row of readCsv(join(out, 'tarnmoor-tmr204-run07.results.csv'))) {
      if (row.Type !== 'Unknown') continue;
      const worst = Math.max(...[...levels.get(row.Analyte!)!.levels.values()].map((xs) => nordtestLevel(xs).U));
      const x = Number(row['pre_extraction_conc [ng/mL]']);
      expect(Number(row['expanded_uncertainty [ng/mL]'])).toBeCloseTo((worst / 100) * Math.abs(x), 12);
      checked++;
    }
    expect(checked).toBe(32);
  });
});
