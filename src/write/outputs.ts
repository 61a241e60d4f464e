import { mkdir } from 'node:fs/promises';
import { basename, extname, join } from 'node:path';
import { StopError } from '../errors.js';
import type { RecalcResult } from '../pipeline.js';
import { commitAll, type WriteJob } from './atomic.js';
import { writeResultsCsv } from './csv.js';
import { outputColumns } from './output-columns.js';
import { writeWorkbook, type RunInfo } from './workbook.js';

export const OUTPUT_KINDS = ['csv', 'xlsx'] as const;
export type OutputKind = (typeof OUTPUT_KINDS)[number];

export interface WriteOptions {
  /** Folder for the outputs (created if missing). */
  outDir: string;
  /** Which outputs to write (default all). */
  outputs?: readonly OutputKind[];
  /** Replace existing outputs (default false: an existing output stops the run before anything is written). */
  force?: boolean;
  /** Facts about the run for the Provenance sheet. */
  run: RunInfo;
}

/** Paths of the outputs of a worklist: `<stem>.results.csv`, `<stem>.xlsx`. */
export function outputPaths(worklistPath: string, outDir: string): Record<OutputKind, string> {
  const stem = basename(worklistPath, extname(worklistPath));
  return { csv: join(outDir, `${stem}.results.csv`), xlsx: join(outDir, `${stem}.xlsx`) };
}

/** Write the chosen outputs atomically: all of them, or none (DESIGN.md §7). */
export async function writeOutputs(result: RecalcResult, options: WriteOptions): Promise<Record<string, string>> {
  const kinds = options.outputs ?? OUTPUT_KINDS;
  try {
    await mkdir(options.outDir, { recursive: true });
  } catch (err) {
    throw new StopError('output', `cannot create the output folder: ${(err as NodeJS.ErrnoException).code ?? String(err)}`, {
      file: options.outDir,
    });
  }
  const paths = outputPaths(result.worklist.path, options.outDir);
  const columns = outputColumns(result);
  const jobs: WriteJob[] = [];
  if (kinds.includes('csv')) {
    jobs.push({
      target: paths.csv,
      write: (tmp) =>
        writeResultsCsv(tmp, {
          headers: columns.map((c) => c.header),
          columns: columns.map((c) => (c.kind === 'number' ? { kind: 'number', values: c.values } : { kind: 'text', values: c.values })),
          rowCount: result.rowsOut,
        }),
    });
  }
  if (kinds.includes('xlsx')) {
    jobs.push({ target: paths.xlsx, write: (tmp) => writeWorkbook(tmp, result, { run: options.run }) });
  }
  await commitAll(jobs, { force: options.force });
  const written: Record<string, string> = {};
  for (const k of kinds) written[k] = paths[k];
  return written;
}
