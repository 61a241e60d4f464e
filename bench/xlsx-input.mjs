/**
 * `node bench/xlsx-input.mjs`: reading XLSX worklists, as whole processes.
 *
 * Writes the synthetic worklist (bench/generate.mjs) as an XLSX with exceljs's
 * streaming writer (numbers as numbers, text as shared strings), then times
 * `recalc --outputs csv` on it under /usr/bin/time -v: wall time, CPU time and
 * peak resident memory. With --hostile it also writes workbooks that the zip
 * guard accepts but that are built to cost a reader memory or time (a sheet of
 * empty styled cells at a high compression ratio, one row numbered far past the
 * others, a wide header over one-cell rows, many values beyond the header) and
 * reports how the run ends and what it cost.
 *
 *   node bench/xlsx-input.mjs [--sizes 50000,600000] [--hostile] [--keep DIR] [--cli dist/cli.js]
 */
import { createReadStream, existsSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { createInterface } from 'node:readline';
import Papa from 'papaparse';
import ExcelJS from 'exceljs';
import { writeWorklist } from './generate.mjs';
import { measure } from './measure.mjs';
import { writeHostile } from './xlsx-hostile.mjs';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '..');
const METHOD = join(ROOT, 'templates', 'generic-lle.yaml');

function parseArgs(argv) {
  const o = { sizes: [50_000, 600_000], hostile: false, keep: undefined, cli: join(ROOT, 'dist', 'cli.js') };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--sizes') o.sizes = argv[++i].split(',').map((s) => Math.round(Number(s.replace(/k$/i, '')) * (/k$/i.test(s) ? 1000 : 1)));
    else if (a === '--hostile') o.hostile = true;
    else if (a === '--keep') o.keep = argv[++i];
    else if (a === '--cli') o.cli = resolve(argv[++i]);
    else throw new Error(`unknown option "${a}"`);
  }
  return o;
}

/** The CSV worklist as an XLSX: cells that read as numbers are written as numbers. */
export async function csvToXlsx(csvPath, xlsxPath) {
  const wb = new ExcelJS.stream.xlsx.WorkbookWriter({ filename: xlsxPath, useStyles: false, useSharedStrings: true });
  const ws = wb.addWorksheet('Worklist');
  const lines = createInterface({ input: createReadStream(csvPath), crlfDelay: Infinity });
  let header = true;
  for await (const line of lines) {
    if (line === '') continue;
    const cells = Papa.parse(line).data[0];
    ws.addRow(header ? cells : cells.map((c) => (c !== '' && /^-?\d+(\.\d+)?(e[+-]?\d+)?$/i.test(c) ? Number(c) : c === '' ? null : c))).commit();
    header = false;
  }
  ws.commit();
  await wb.commit();
}

async function main() {
  const o = parseArgs(process.argv.slice(2));
  const dir = o.keep ?? mkdtempSync(join(tmpdir(), 'phasebook-xlsx-bench-'));
  mkdirSync(dir, { recursive: true });
  const run = async (name, file, okCodes = [0, 1, 2]) => {
    const out = join(dir, `out-${name}`);
    const m = await measure(process.execPath, [o.cli, 'recalc', file, '-m', METHOD, '-o', out, '--force', '--quiet', '--outputs', 'csv'], { okCodes, scratch: dir });
    const said = m.code === 2 ? ` — refused` : '';
    console.log(`| ${name} | ${m.code} | ${m.wallS.toFixed(2)} | ${m.cpuS.toFixed(2)} | ${Math.round(m.peakMb)} |${said}`);
  };
  console.log('| case | exit | wall s | cpu s | peak MB |');
  console.log('|---|---|---|---|---|');
  for (const size of o.sizes) {
    const csv = join(dir, `worklist-${size}.csv`);
    const xlsx = join(dir, `worklist-${size}.xlsx`);
    if (!existsSync(xlsx)) {
      await writeWorklist(csv, size);
      await csvToXlsx(csv, xlsx);
    }
    await run(`${size} rows`, xlsx, [0, 1]);
  }
  if (o.hostile) {
    for (const { name, path } of await writeHostile(dir)) await run(name, path);
  }
  if (!o.keep) rmSync(dir, { recursive: true, force: true });
}

if (import.meta.url === `file://${process.argv[1]}`) await main();
