import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import Papa from 'papaparse';
import { describe, expect, it } from 'vitest';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';

// The built CLI (dist/cli.js) over every shipped method and demo worklist. Timeouts are generous
// because each test starts the CLI several times, which is slow on a busy machine.

const TEMPLATES = readdirSync(join(ROOT, 'templates')).filter((f) => f.endsWith('.yaml')).sort();

/** Each scenario method and the demo worklist written in that lab's style. */
const DEMOS = [
  { method: 'surface-water', worklist: 'kestrel-brook-2026-11', rows: 44, delimiter: ',' },
  { method: 'plasma-amitriptyline', worklist: 'tarnmoor-tmr204-run07', rows: 60, delimiter: ',' },
  { method: 'fruit-juice', worklist: 'elderwick-juice-s2611-3', rows: 22, delimiter: ';' },
];

function readCsv(path: string, delimiter = ','): Record<string, string>[] {
  return Papa.parse<Record<string, string>>(readFileSync(path, 'utf8'), { header: true, skipEmptyLines: 'greedy', delimiter }).data;
}

const num = (text: string | undefined) => Number(String(text).replace(',', '.'));

/** E = 1 − (V_aq/(V_aq + D·V_org))^n (IUPAC Gold Book F02503), written out here independently of src/. */
const efficiency = (d: number, vAq: number, vOrg: number, n: number) => 1 - (vAq / (vAq + d * vOrg)) ** n;

describe('every shipped method passes method check', { timeout: 180_000 }, () => {
  it('ships the canonical method and three scenario methods', () => {
    expect(TEMPLATES).toEqual(expect.arrayContaining(['fruit-juice.yaml', 'generic-lle.yaml', 'plasma-amitriptyline.yaml', 'surface-water.yaml']));
  });

  it.each(TEMPLATES)('%s', (file) => {
    const r = runCli(['method', 'check', join('templates', file)]);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(r.stdout.split('\n')[0]).toMatch(/^Method [\w.-]+, version [^:]+: valid$/);
    expect(r.stdout).toContain('Formula columns, in the order they are evaluated');
  });
});

describe('every demo worklist runs end to end with its method', { timeout: 180_000 }, () => {
  it.each(DEMOS)('$worklist with $method: exit 0, every row out, batch passes', ({ method, worklist, rows, delimiter }) => {
    const out = tempDir();
    const r = runCli(['recalc', `samples/${worklist}.csv`, '-m', `templates/${method}.yaml`, '-o', out, '--timestamp', '2026-11-20T16:00:00Z']);
    expect(r.stderr).toContain('Batch verdict: PASS');
    expect(r.code, r.stderr).toBe(0);
    const input = readCsv(join(ROOT, 'samples', `${worklist}.csv`), delimiter);
    // The results CSV speaks the worklist's dialect (issue 13): a semicolon worklist gives a semicolon file.
    const results = readCsv(join(out, `${worklist}.results.csv`), delimiter);
    expect(input).toHaveLength(rows);
    expect(results).toHaveLength(rows);
    expect(results.every((row) => row.qc_status !== 'fail')).toBe(true);
    expect(results.some((row) => row.flags.includes('INPUT_ERROR'))).toBe(false);
  });

  it('npm run demo: the surface-water scenario passes', () => {
    const r = runCli(['recalc', 'samples/kestrel-brook-2026-11.csv', '--method', 'templates/surface-water.yaml', '--out', tempDir(), '--force']);
    expect(r.code, r.stderr).toBe(0);
  });

  it('plasma: µL volumes, high-pH extraction of a base, QC accuracy re-derived by hand', () => {
    const out = tempDir();
    const r = runCli(['recalc', 'samples/tarnmoor-tmr204-run07.csv', '-m', 'templates/plasma-amitriptyline.yaml', '-o', out]);
    expect(r.code, r.stderr).toBe(0);
    const rows = readCsv(join(out, 'tarnmoor-tmr204-run07.results.csv'));
    // Base: D = K/(1 + 10^(pKa − pH)) (Harris; Harvey §7.7), K = 10^0.6, pKa 9.4, pH 12, one extraction of 1000 µL from 200 µL.
    const d = 10 ** 0.6 / (1 + 10 ** (9.4 - 12));
    const e = efficiency(d, 200, 1000, 1);
    const qcs = rows.filter((row) => row.Type === 'QC');
    expect(qcs).toHaveLength(24);
    for (const row of qcs.filter((x) => x.Analyte === 'Amitriptyline')) {
      // C0 = C_extract · dilution · V_final/(V_aq · E) (REFERENCES.md §1 mass balance); accuracy = C0/nominal × 100
      const c0 = (num(row['Extract Conc (ng/mL)']) * num(row.Dil) * num(row['Recon Vol [µL]'])) / (num(row['Plasma Vol [µL]']) * e);
      expect(num(row['pre_extraction_conc [ng/mL]'])).toBeCloseTo(c0, 9);
      expect(num(row.spike_recovery_pct)).toBeCloseTo((100 * c0) / num(row['Nominal (ng/mL)']), 9);
    }
    // Within ±15 % of nominal, ±20 % at the LLOQ (FDA BMV 2018 / ICH M10), so the run rule accepts the run.
    for (const row of qcs) {
      const [lo, hi] = row['QC Level'] === 'LLOQ' ? [80, 120] : [85, 115];
      expect(num(row.spike_recovery_pct)).toBeGreaterThanOrEqual(lo);
      expect(num(row.spike_recovery_pct)).toBeLessThanOrEqual(hi);
    }
    expect(new Set(qcs.map((row) => row['QC Level']))).toEqual(new Set(['LLOQ', 'Low', 'Mid', 'High']));

    // Internal standard (issue 14): one sample at 38 % of the run's mean QC response is flagged; no QC is.
    // The reference is recomputed here from the worklist's own IS areas, QC rows of the analyte.
    const istd = rows.filter((row) => row.flags.includes('ISTD_RESPONSE'));
    expect(istd.map((row) => [row.Sample, row.Analyte, row.qc_status])).toEqual([['TMR204-0127-06h', 'Amitriptyline', '']]);
    const qcAreas = qcs.filter((x) => x.Analyte === 'Amitriptyline').map((x) => num(x['IS Area']));
    const mean = qcAreas.reduce((a, b) => a + b, 0) / qcAreas.length;
    expect((100 * num(istd[0]!['IS Area'])) / mean).toBeLessThan(50);
    expect(r.stderr).toContain('1 sample result has an internal-standard response outside its window');

    // Reported results (issue 14): three significant figures, half away from zero; "< 1" below the LLOQ of 1 ng/mL.
    const reported = (id: string, analyte: string) => rows.find((x) => x.Sample === id && x.Analyte === analyte)!['reported_result [ng/mL]'];
    const sig3 = (x: number) => Number(x.toPrecision(3)); // ECMA-262 Number.prototype.toPrecision, for values that are no decimal tie
    for (const row of rows.filter((x) => x.Type === 'Unknown')) {
      const c = num(row['pre_extraction_conc [ng/mL]']);
      const shown = row['reported_result [ng/mL]']!;
      if (c < 1) expect(shown).toBe('< 1');
      else expect(Number(shown)).toBe(sig3(c));
    }
    expect(reported('DB-01', 'Amitriptyline')).toBe('< 1');
    expect(reported('QC-LLOQ-3', 'Nortriptyline')).toBe('0.967'); // a spiked control reports its number below the LLOQ
  });

  it('fruit juice: decimal commas, acidic extraction, fortified-sample recovery re-derived by hand', () => {
    const out = tempDir();
    const r = runCli(['recalc', 'samples/elderwick-juice-s2611-3.csv', '-m', 'templates/fruit-juice.yaml', '-o', out]);
    expect(r.code, r.stderr).toBe(0);
    const rows = readCsv(join(out, 'elderwick-juice-s2611-3.results.csv'), ';'); // the worklist's dialect: semicolon, decimal comma
    // Acid: D = K/(1 + 10^(pH − pKa)) (Harvey §7.7), sorbic acid K 6, pKa 4.76, pH 2.5, two 5.0 mL portions from 10.0 mL.
    const e = efficiency(6 / (1 + 10 ** (2.5 - 4.76)), 10, 5, 2);
    const sorbic = rows.filter((row) => row.Substance === 'Sorbic acid');
    const c0 = (id: string) => {
      const row = sorbic.find((x) => x['Sample code'] === id)!;
      return (num(row['Extract (µg/mL)']) * num(row['Dilution factor']) * num(row['Made up to (mL)'])) / (num(row['Juice (mL)']) * e);
    };
    const cordial = sorbic.find((x) => x['Sample code'] === 'EW-2611-033')!;
    expect(num(cordial['pre_extraction_conc [mg/L]'])).toBeCloseTo(c0('EW-2611-033'), 9); // diluted 1 + 4 before injection
    // Matrix spike %R = (Cs − Cu)/Cn × 100 (US EPA SW-846 Method 1312 §8.2.4)
    const fs = sorbic.find((x) => x.Kind === 'FS')!;
    expect(num(fs.spike_recovery_pct)).toBeCloseTo(((c0('EW-2611-034-FS') - c0('EW-2611-034')) / 100) * 100, 9);
    // RPD = |a − b|/((a + b)/2) × 100 on concentrations, replicate against its test portion
    const rep = sorbic.find((x) => x.Kind === 'REP')!;
    const a = c0('EW-2611-035-REP');
    const b = c0('EW-2611-035');
    expect(num(rep.rpd_pct)).toBeCloseTo((Math.abs(a - b) / ((a + b) / 2)) * 100, 9);
  });
});

describe('method draft on each demo worklist', { timeout: 300_000 }, () => {
  it.each(DEMOS)('$worklist: the draft passes method check and reads the worklist', ({ worklist, rows }) => {
    const dir = tempDir();
    const draft = join(dir, 'draft.yaml');
    const r = runCli(['method', 'draft', `samples/${worklist}.csv`, '--out', draft]);
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/^phasebook: placed \d+ of \d+ headers on canonical fields$/m);
    expect(r.stderr).not.toContain('required fields with no column');
    const check = runCli(['method', 'check', draft]);
    expect(check.code).toBe(0);
    // The draft still lacks the analyte data and maybe some codes, but it reads every row.
    const run = runCli(['recalc', `samples/${worklist}.csv`, '-m', draft, '-o', dir]);
    expect(run.code === 0 || run.code === 1).toBe(true);
    expect(readCsv(join(dir, `${worklist}.results.csv`))).toHaveLength(rows);
  });
});

describe('plan on the command line', { timeout: 180_000 }, () => {
  it('E1 — Harris, Quantitative Chemical Analysis: one 500 mL portion 93.75 %, five of 100 mL 99.90 %', () => {
    const r = runCli(['plan', '--k', '3', '--sample-volume', '100', '--solvent-volume', '500', '--max-portions', '5']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/^ {2}1 +500 +93\.75 % +0\.0625 +no$/m); // published 93.8 %, q = 0.062
    expect(r.stdout).toMatch(/^ {2}5 +100 +99\.90 % +0\.000977 +yes$/m); // published 99.90 %, q = 0.00098
  });

  it('E3 — Harvey §7.7 as JSON: 9990 mL in one step, 8 portions of 15 mL', () => {
    const r = runCli(['plan', '--k', '5', '--sample-volume', '50', '--solvent-volume', '15', '--target', '0.999', '--json']);
    expect(r.code).toBe(0);
    const p = JSON.parse(r.stdout) as { solventNeeded: Array<{ totalVolume: number }>; repeat: { portions: number } };
    expect(p.solventNeeded[0]!.totalVolume).toBeCloseTo(9990, 6); // published 9990 mL
    expect(p.repeat.portions).toBe(8); // published 8 × 15.00 mL
  });

  it('a usage error exits 2', () => {
    const r = runCli(['plan', '--sample-volume', '10']);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('expected one of --k or --log-k');
  });
});
