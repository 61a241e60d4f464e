/**
 * Hostile and pathological inputs for `npm run bench` (issue 19): each is made here,
 * run once through the built CLI as a whole process, and judged on wall time and peak
 * memory against a ceiling, so that a quadratic corner or an unbounded reader that
 * comes back shows as a failed target. The cases (invented data):
 *
 *   one huge batch        44,000 rows in one batch and analyte, 4,000 of them failing
 *                         blanks: every sample is qualified by all of them (was quadratic:
 *                         22k rows took 1.6 GB, 44k ran out of memory)
 *   40,000 type codes     a 1 MB method mapping 40,000 lab codes (the YAML library's
 *                         duplicate-key check took over 20 s)
 *   XLSX built to cost    the workbooks of bench/xlsx-hostile.mjs, each accepted by the zip
 *                         guard (a bomb of empty styled cells at ~500:1, a 16,384-column
 *                         header over 2M rows, values beyond the header, number cells up to
 *                         the limits, a row numbered 2,000,000,000): any result (read, or a
 *                         refusal naming --max-unpacked), within 1.5 GB (issue 19's target)
 *
 * Each case is a function of the work folder that writes its inputs and returns the
 * command to run and its ceilings.
 */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { HEADERS } from './generate.mjs';
import { writeHostile } from './xlsx-hostile.mjs';
import { csvToXlsx } from './xlsx-input.mjs';
import { writeWorklist } from './generate.mjs';

const row = (cells) => HEADERS.map((h) => cells[h] ?? '').join(',');

export const HOSTILE_CASES = [
  {
    name: 'one batch of 44,000 rows, 4,000 failing blanks',
    make(work, cli, method) {
      const file = join(work, 'hostile-one-batch.csv');
      const lines = [HEADERS.join(',')];
      const common = { batch_id: 'B1', analyte: 'veltrazine', sample_volume: 250, solvent_volume: 30, extractions: 3, final_volume: 1, dilution: 1, partition_coeff: 180, acid_base: 'neutral', reporting_limit: 1.2 };
      for (let i = 0; i < 4000; i++) lines.push(row({ ...common, sample_id: `MB-${i}`, sample_type: 'blank', extract_conc: 3000 }));
      for (let i = 0; i < 40000; i++) lines.push(row({ ...common, sample_id: `S-${i}`, sample_type: 'sample', extract_conc: 20 + (i % 7) }));
      writeFileSync(file, lines.join('\n') + '\n');
      return { args: [cli, 'recalc', file, '-m', method, '-o', join(work, 'out-hostile'), '--force', '--quiet', '--outputs', 'csv'], okCodes: [1], maxWallS: 30, maxPeakMb: 1024 };
    },
  },
  {
    name: 'a method with 40,000 sample-type codes',
    make(work, cli) {
      const file = join(work, 'hostile-codes.yaml');
      const codes = Array.from({ length: 40000 }, (_, i) => `  LABCODE-${i}: sample\n`).join('');
      writeFileSync(file, `name: many-codes\nsample_types:\n${codes}formulas:\n  - name: y\n    expr: extract_conc * 2\n`);
      return { args: [cli, 'method', 'check', file], okCodes: [0], maxWallS: 10, maxPeakMb: 1024 };
    },
  },
];

/** The XLSX cases, written into `work`: one process each, any exit code (a refusal is a right answer). */
export async function xlsxHostileCases(work, cli, method) {
  const cases = [];
  // A genuine export of 600,000 rows (it peaked at 4.2 GB with the reader before): read within 1.5 GB.
  const csv = join(work, 'genuine-600k.csv');
  const xlsx = join(work, 'genuine-600k.xlsx');
  await writeWorklist(csv, 600_000);
  await csvToXlsx(csv, xlsx);
  cases.push({
    name: 'XLSX: a genuine worklist of 600,000 rows',
    run: { args: [cli, 'recalc', xlsx, '-m', method, '-o', join(work, 'out-hostile-xlsx'), '--force', '--quiet', '--outputs', 'csv'], okCodes: [0, 1], maxWallS: 120, maxPeakMb: 1536 },
  });
  for (const { name, path } of await writeHostile(work)) {
    cases.push({
      name: `XLSX: ${name}`,
      run: { args: [cli, 'recalc', path, '-m', method, '-o', join(work, 'out-hostile-xlsx'), '--force', '--quiet', '--outputs', 'csv'], okCodes: [0, 1, 2], maxWallS: 90, maxPeakMb: 1536 },
    });
  }
  return cases;
}
