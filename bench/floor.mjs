/**
 * The floor: the plain script a lab's data person would write for the same job,
 * to measure phasebook against. It parses a canonical worklist with papaparse
 * (rows as arrays of strings, columns found by header name), does the generic method's arithmetic in
 * one loop over the rows (distribution ratio, extraction efficiency,
 * pre-extraction concentration, spike recovery, RPD; a control's parent and pair
 * are looked up in maps filled as the loop passes them, which works because a
 * worklist lists a parent before its controls) and writes the rows back with
 * papaparse `unparse`. No validation, no QC, no provenance.
 *
 * With `--xlsx` it also writes the same cells, as plain unstyled values, with
 * exceljs's streaming writer: the floor for the workbook.
 *
 *   node bench/floor.mjs WORKLIST OUTDIR [--xlsx] [--no-csv]
 *
 * Prints one JSON line with its phase times (ms) on stdout.
 */
import { readFileSync, writeFileSync, mkdirSync } from 'node:fs';
import { basename, extname, join } from 'node:path';
import { performance } from 'node:perf_hooks';
import Papa from 'papaparse';
import { FLOOR_COLUMNS } from './floor-columns.mjs';


const t0 = performance.now();
const args = process.argv.slice(2);
const flags = new Set(args.filter((a) => a.startsWith('--')));
const [input, outDir] = args.filter((a) => !a.startsWith('--'));
if (!input || !outDir) {
  process.stderr.write('usage: node bench/floor.mjs WORKLIST OUTDIR [--xlsx] [--no-csv]\n');
  process.exit(2);
}
mkdirSync(outDir, { recursive: true });
const stem = basename(input, extname(input));

const parsed = Papa.parse(readFileSync(input, 'utf8'), { skipEmptyLines: true });
const rows = parsed.data;
const fields = rows.shift();
const col = Object.fromEntries(fields.map((h, i) => [h, i]));
const tParsed = performance.now();

const num = (s) => (s === undefined || s === '' ? NaN : Number(s));
const key = (a, b) => `${a}\u0000${b}`;
const samples = new Map(); // analyte + sample_id → pre-extraction conc of a sample row
const lcsById = new Map();
const msByParent = new Map();
const lcsByBatch = new Map();
for (const row of rows) {
  const k = num(row[col.partition_coeff]);
  const ph = num(row[col.ph]);
  const pka = num(row[col.pka]);
  const ab = row[col.acid_base];
  const f = ab === 'acid' ? 1 / (1 + 10 ** (ph - pka)) : ab === 'base' ? 1 / (1 + 10 ** (pka - ph)) : 1;
  const d = k * f;
  const vAq = num(row[col.sample_volume]);
  const vOrg = num(row[col.solvent_volume]);
  const n = num(row[col.extractions]);
  const e = (Number.isNaN(d) ? 1 : 1 - (vAq / (vAq + d * vOrg)) ** n) * 100;
  const c = (num(row[col.extract_conc]) * num(row[col.dilution]) * num(row[col.final_volume])) / ((vAq * e) / 100);
  const spike = num(row[col.spike_conc]);
  const type = row[col.sample_type];
  const a = row[col.analyte];
  const parent = row[col.parent_id];
  let rec = NaN;
  let rpd = NaN;
  if (type === 'sample') samples.set(key(a, row[col.sample_id]), c);
  else if (type === 'lcs') {
    lcsById.set(key(a, row[col.sample_id]), c);
    lcsByBatch.set(key(a, row[col.batch_id]), c);
    rec = ((c - 0) * 100) / spike;
  } else if (type === 'lcsd' || type === 'qc') {
    rec = ((c - 0) * 100) / spike;
    if (type === 'lcsd') {
      const l = parent ? lcsById.get(key(a, parent)) : lcsByBatch.get(key(a, row[col.batch_id]));
      if (l !== undefined) rpd = (Math.abs(c - l) * 200) / (c + l);
    }
  } else if (type === 'ms' || type === 'msd' || type === 'dup') {
    const p = samples.get(key(a, parent));
    if (type === 'dup') {
      if (p !== undefined) rpd = (Math.abs(c - p) * 200) / (c + p);
    } else {
      rec = p === undefined ? NaN : ((c - p) * 100) / spike;
      if (type === 'ms') msByParent.set(key(a, parent), c);
      else {
        const m = msByParent.get(key(a, parent));
        if (m !== undefined) rpd = (Math.abs(c - m) * 200) / (c + m);
      }
    }
  }
  row.length = fields.length; // a short row gets empty cells
  row.push(...[d, e, c, rec, rpd].map((x) => (Number.isFinite(x) ? x : '')));
}
const tComputed = performance.now();

const allFields = [...fields, ...FLOOR_COLUMNS];
let tCsv = tComputed;
if (!flags.has('--no-csv')) {
  writeFileSync(join(outDir, `${stem}.floor.csv`), Papa.unparse({ fields: allFields, data: rows }, { newline: '\n' }));
  tCsv = performance.now();
}

let tXlsx = tCsv;
if (flags.has('--xlsx')) {
  const { default: ExcelJS } = await import('exceljs');
  const tImported = performance.now();
  const numeric = new Set(['extract_conc', 'sample_volume', 'solvent_volume', 'extractions', 'final_volume', 'dilution',
    'partition_coeff', 'ph', 'pka', 'spike_conc', 'reporting_limit', ...FLOOR_COLUMNS]);
  const wb = new ExcelJS.stream.xlsx.WorkbookWriter({ filename: join(outDir, `${stem}.floor.xlsx`), useStyles: false, useSharedStrings: false });
  const ws = wb.addWorksheet('Results');
  ws.addRow(allFields).commit();
  const isNum = allFields.map((f) => numeric.has(f));
  for (const row of rows) {
    const values = new Array(allFields.length);
    for (let i = 0; i < allFields.length; i++) {
      const v = row[i];
      values[i] = v === '' || v === undefined ? null : isNum[i] ? Number(v) : v;
    }
    ws.addRow(values).commit();
  }
  ws.commit();
  await wb.commit();
  tXlsx = performance.now();
  process.stdout.write(
    JSON.stringify({ rows: rows.length, parseMs: tParsed - t0, computeMs: tComputed - tParsed, csvMs: tCsv - tComputed, xlsxImportMs: tImported - tCsv, xlsxMs: tXlsx - tImported }) + '\n',
  );
} else {
  process.stdout.write(JSON.stringify({ rows: rows.length, parseMs: tParsed - t0, computeMs: tComputed - tParsed, csvMs: tCsv - tComputed }) + '\n');
}
