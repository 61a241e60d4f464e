#!/usr/bin/env node
/**
 * The shipped demo QC histories (issue 16): invented run worklists, made the same way
 * every time from a fixed seed, each recorded into one QC history through the built
 * command line (`recalc --history`), then `figures` on that history.
 *
 *   npm run demo:history                      # builds, then writes out/demo-history/
 *   node samples/demo-history.mjs [--out DIR] [--worklists-only]
 *
 * Two invented scenarios, both with the methods shipped in templates/:
 * - surface water (templates/surface-water.yaml, the Kestrel Brook survey of the quick
 *   start): 30 weekly batches from 2026-03-02, each with, per analyte, a method blank, a
 *   blank spike and its duplicate, two river samples, a matrix spike and its duplicate;
 *   every other batch a low-level spiked blank (sample type `mdl`, 0.05 ug/L) for the
 *   detection limit. 2,4-Dichlorophenol's blank is not detected in every fourth batch,
 *   Quinoline's always gives a number, Naphthalene's never does: the three cases of the
 *   detection limit's blank rule.
 * - plasma (templates/plasma-amitriptyline.yaml, the Tarnmoor study): 30 weekly runs from
 *   2026-01-12, each with a double blank, a zero sample, three QC samples at each of LLOQ,
 *   low, mid and high, and four subject samples.
 *
 * Every number is invented: instrument readings drawn from normal distributions around
 * plausible values (the recoveries a lab then sees also carry the method's theoretical
 * extraction efficiency). No real lab, site, subject or result is behind them.
 *
 * Written under DIR (default out/demo-history): worklists/ (the invented worklists),
 * runs/ (each run's results CSV), qc-history.db (the history). The history is built anew
 * each time: DIR must be new or a folder this script made (it holds .phasebook-demo-history).
 * The history is not kept in the repository: a binary file is unreadable in a review and
 * would go stale whenever a method or the history's layout changes; this script, its
 * seed and the test that checks its figures (tests/e2e/demo-history.test.ts) are the record.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const MARKER = '.phasebook-demo-history';
const SEED = 20260302;
const RUNS = 30;
const WEEK = 7 * 86_400_000;
/** The end of the figures' period: after the last recorded run, before the later demo runs. */
export const FIGURES_UNTIL = '2026-10-31';

/** mulberry32: a small seeded generator, so that the invented numbers are the same every time. */
function uniform(seed) {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Normal draws by the Box–Muller transform over the seeded uniform generator. */
function normal(rand) {
  return (mean, sd) => {
    const u = 1 - rand();
    const v = rand();
    return mean + sd * Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
  };
}

/** An instrument reading as an export shows it: four significant figures. */
const reading = (x) => String(Number(x.toPrecision(4)));

const csvCell = (text) => (/[",\n]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text);
const csvLine = (cells) => cells.map((c) => csvCell(String(c))).join(',');

// ---------------------------------------------------------------------------------------------
// Surface water: the instrument reads the extract in ng/mL; 1000 mL of river water, three 60 mL
// portions of dichloromethane, 1.0 mL of extract. A 2.0 ug/L spike reads about 2000 ng/mL.

const WATER_HEADER = ['Sample Name', 'QC Code', 'Spiked From', 'Prep Batch', 'Compound', 'Extract Result (ng/mL)', 'Sample Vol (mL)', 'DCM per Portion (mL)', 'Portions', 'Final Vol (mL)', 'Dilution', 'Extraction pH', 'Spike Added (ug/L)'];

/** Per analyte: the extraction pH, the recoveries' centre and scatter (percent), and the blank. */
const WATER_ANALYTES = [
  { name: '2,4-Dichlorophenol', ph: '2.0', lcs: [94, 5], ms: [91, 6], native: [300, 500], blank: (i, n) => (i % 4 === 0 ? 'ND' : reading(Math.abs(n(4, 1.5)))) },
  { name: 'Quinoline', ph: '11.0', lcs: [101, 6], ms: [96, 7], native: [100, 300], blank: (i, n) => reading(n(1.5, 1.2)) },
  { name: 'Naphthalene', ph: '', lcs: [97, 4], ms: [88, 6], native: [200, 900], blank: () => 'ND' },
];
const SPIKE = 2.0;
const MDL_SPIKE = 0.05;

function waterWorklist(i, rand) {
  const n = normal(rand);
  const week = 10 + i - 1;
  const batch = `KB-26W${String(week).padStart(2, '0')}`;
  const rows = [];
  for (const a of WATER_ANALYTES) {
    const row = (id, code, parent, extract, spike) => rows.push([id, code, parent, batch, a.name, extract, '1000.0', '60.0', '3', '1.0', '1', a.ph, spike]);
    const spiked = (centre) => (SPIKE * 1000 * n(centre[0], centre[1])) / 100;
    row(`${batch}-BLK`, 'MB', '', a.blank(i, n), '');
    row(`${batch}-LCS`, 'BS', '', reading(spiked(a.lcs)), String(SPIKE));
    row(`${batch}-LCSD`, 'BSD', `${batch}-LCS`, reading(spiked(a.lcs)), String(SPIKE));
    const [lo, hi] = a.native;
    const nativeA = reading(lo + (hi - lo) * rand());
    const nativeB = reading(lo + (hi - lo) * rand());
    row(`KB-01 Weir ${batch}`, 'SAMP', '', nativeA, '');
    row(`KB-03 Footbridge ${batch}`, 'SAMP', '', nativeB, '');
    for (const code of ['MS', 'MSD']) row(`KB-03 Footbridge ${batch} ${code}`, code, `KB-03 Footbridge ${batch}`, reading(Number(nativeB) + spiked(a.ms)), String(SPIKE));
    // The low-level spiked blank of 40 CFR 136 App. B Rev. 2, every other batch: 0.05 ug/L reads about 50 ng/mL.
    if (i % 2 === 1) row(`${batch}-LLS`, 'mdl', '', reading(MDL_SPIKE * 1000 * n(0.96, 0.09)), String(MDL_SPIKE));
  }
  return { name: `kestrel-brook-2026-w${String(week).padStart(2, '0')}.csv`, text: [csvLine(WATER_HEADER), ...rows.map(csvLine)].join('\n') + '\n' };
}

// ---------------------------------------------------------------------------------------------
// Plasma: 200 uL of plasma, 1000 uL of hexane/isoamyl alcohol, taken up in 100 uL. A QC at C ng/mL
// reads about C × 200/100 × 0.95 in the extract (0.95 about the efficiency at pH 12).

const PLASMA_HEADER = ['Sample', 'Type', 'QC Level', 'Run', 'Analyte', 'Plasma Vol [µL]', 'Hexane-IAA Vol [µL]', 'Recon Vol [µL]', 'Dil', 'Nominal (ng/mL)', 'Extract Conc (ng/mL)', 'IS Area'];
const PLASMA_LEVELS = [
  { level: 'LLOQ', nominal: 1 },
  { level: 'Low', nominal: 3 },
  { level: 'Mid', nominal: 40 },
  { level: 'High', nominal: 160 },
];
/** Per analyte: the QC accuracy's centre and scatter (percent), at the LLOQ apart, and the internal standard's area. */
const PLASMA_ANALYTES = [
  { name: 'Amitriptyline', qc: [98, 4], lloq: [101, 7], is: 840_000 },
  { name: 'Nortriptyline', qc: [96, 4.5], lloq: [97, 8], is: 615_000 },
];

function plasmaWorklist(i, rand) {
  const n = normal(rand);
  const run = `TMR-P${String(i).padStart(2, '0')}`;
  const rows = [];
  for (const a of PLASMA_ANALYTES) {
    const is = () => String(Math.round(n(a.is, a.is * 0.03)));
    const row = (id, type, level, nominal, extract, area) => rows.push([id, type, level, run, a.name, '200', '1000', '100', '1', nominal, extract, area]);
    row(`${run}-DB`, 'Blank', '', '', reading(Math.abs(n(0.05, 0.02))), '');
    row(`${run}-ZS`, 'Zero', '', '', reading(Math.abs(n(0.07, 0.02))), is());
    for (const { level, nominal } of PLASMA_LEVELS) {
      const [centre, sd] = level === 'LLOQ' ? a.lloq : a.qc;
      for (let k = 1; k <= 3; k++) row(`${run}-QC-${level.toUpperCase()}-${k}`, 'QC', level, String(nominal), reading(nominal * 2 * 0.95 * (n(centre, sd) / 100)), is());
    }
    for (let k = 1; k <= 4; k++) row(`${run}-S${k}`, 'Unknown', '', '', reading(5 + 150 * rand()), is());
  }
  return { name: `tarnmoor-tmr204-p${String(i).padStart(2, '0')}.csv`, text: [csvLine(PLASMA_HEADER), ...rows.map(csvLine)].join('\n') + '\n' };
}

// ---------------------------------------------------------------------------------------------

/** Every invented run, in the order it is recorded: worklist name and text, method, run time. */
export function demoRuns() {
  const water = uniform(SEED);
  const plasma = uniform(SEED + 1);
  const runs = [];
  for (let i = 1; i <= RUNS; i++) {
    runs.push({ ...waterWorklist(i, water), method: 'templates/surface-water.yaml', time: new Date(Date.UTC(2026, 2, 2, 14) + (i - 1) * WEEK).toISOString() });
  }
  for (let i = 1; i <= RUNS; i++) {
    runs.push({ ...plasmaWorklist(i, plasma), method: 'templates/plasma-amitriptyline.yaml', time: new Date(Date.UTC(2026, 0, 12, 9) + (i - 1) * WEEK).toISOString() });
  }
  return runs;
}

function main(argv) {
  let out = join(ROOT, 'out', 'demo-history');
  let record = true;
  for (let k = 0; k < argv.length; k++) {
    if (argv[k] === '--out' && argv[k + 1]) out = resolve(argv[++k]);
    else if (argv[k] === '--worklists-only') record = false;
    else {
      process.stderr.write(`demo-history: unknown argument "${argv[k]}": expected --out DIR or --worklists-only\n`);
      return 2;
    }
  }
  if (existsSync(out) && !existsSync(join(out, MARKER))) {
    process.stderr.write(`demo-history: ${out} exists and was not made by this script: expected a new folder (give --out)\n`);
    return 2;
  }
  rmSync(out, { recursive: true, force: true });
  mkdirSync(join(out, 'worklists'), { recursive: true });
  writeFileSync(join(out, MARKER), 'made by samples/demo-history.mjs; removed and made again by it\n');
  const cli = join(ROOT, 'dist', 'cli.js');
  if (record && !existsSync(cli)) {
    process.stderr.write('demo-history: dist/cli.js is missing: run `npm run build` first (npm run demo:history does)\n');
    return 2;
  }
  const history = join(out, 'qc-history.db');
  const runs = demoRuns();
  for (const [k, run] of runs.entries()) {
    const worklist = join(out, 'worklists', run.name);
    writeFileSync(worklist, run.text);
    if (!record) continue;
    const args = ['recalc', worklist, '-m', join(ROOT, run.method), '-o', join(out, 'runs'), '--outputs', 'csv', '--history', history, '--timestamp', run.time, '--quiet', '--force'];
    const r = spawnSync(process.execPath, [cli, ...args], { encoding: 'utf8' });
    // Exit 1 is a run written with QC failures: a history keeps those too. Anything else stops.
    if (r.status !== 0 && r.status !== 1) {
      process.stderr.write(`demo-history: recording ${run.name} stopped (exit ${r.status}):\n${r.stderr}`);
      return 2;
    }
    if (process.stderr.isTTY) process.stderr.write(`\rrecorded ${k + 1} of ${runs.length} runs`);
  }
  if (!record) {
    process.stdout.write(`wrote ${runs.length} worklists to ${relative(process.cwd(), join(out, 'worklists')) || '.'}\n`);
    return 0;
  }
  if (process.stderr.isTTY) process.stderr.write('\n');
  const figures = spawnSync(process.execPath, [cli, 'figures', '--history', history, '--until', FIGURES_UNTIL], { encoding: 'utf8' });
  process.stdout.write(figures.stdout + figures.stderr);
  const h = relative(process.cwd(), history);
  const later = relative(process.cwd(), join(out, 'later'));
  process.stdout.write(
    [
      '',
      'Next: the quick start run and the plasma demo with their expanded uncertainty from this history:',
      `  node dist/cli.js recalc samples/kestrel-brook-2026-11.csv -m templates/surface-water.yaml -o ${later} --history ${h} --timestamp 2026-11-20T10:00:00Z`,
      `  node dist/cli.js recalc samples/tarnmoor-tmr204-run07.csv -m templates/plasma-amitriptyline.yaml -o ${later} --history ${h} --timestamp 2026-11-20T10:00:00Z`,
      '',
    ].join('\n'),
  );
  return figures.status ?? 2;
}

if (process.argv[1] && resolve(process.argv[1]) === fileURLToPath(import.meta.url)) process.exitCode = main(process.argv.slice(2));
