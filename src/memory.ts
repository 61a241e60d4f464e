/**
 * The in-memory entry of the library (issue 18): a worklist given as CSV text, as rows
 * of objects (keys are the headers, in the order first seen) or as rows of arrays (the
 * first row the headers), recalculated exactly as a file would be. The data is written
 * as CSV to a private temporary file and read by the same reader, so nothing about
 * reading differs (decimal marks, non-detects, row numbers, messages); the file is
 * removed afterwards, and the result names the worklist `<name>.csv` (default
 * "worklist"), which writeOutputs then uses for the outputs' names.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Papa from 'papaparse';
import { StopError } from './errors.js';
import { recalculate, type RecalcOptions, type RecalcResult } from './pipeline.js';
import { checkWorklistName } from './read/stdin.js';

export type Cell = string | number | boolean | null | undefined;
export type WorklistData = string | ReadonlyArray<Readonly<Record<string, Cell>>> | ReadonlyArray<ReadonlyArray<Cell>>;

export interface DataOptions extends RecalcOptions {
  /** The worklist's name, which the outputs take (`<name>.results.csv`). Default "worklist". */
  name?: string;
}

export async function recalculateData(data: WorklistData, options: DataOptions): Promise<RecalcResult> {
  const name = checkWorklistName(options.name ?? 'worklist');
  const folder = mkdtempSync(join(tmpdir(), 'phasebook-data-'));
  const path = join(folder, `${name}.csv`);
  try {
    writeFileSync(path, typeof data === 'string' ? data : toCsv(data), 'utf8');
    const result = await recalculate(path, options);
    return { ...result, worklist: { ...result.worklist, path: `${name}.csv` }, raw: { ...result.raw, source: `${name}.csv` } };
  } catch (err) {
    if (err instanceof StopError && err.location.file === path) throw new StopError(err.kind, err.message, { ...err.location, file: `${name}.csv` });
    throw err;
  } finally {
    rmSync(folder, { recursive: true, force: true });
  }
}

function toCsv(rows: Exclude<WorklistData, string>): string {
  if (rows.length === 0) throw new StopError('input', 'is empty, expected a header row and data rows', { file: '(rows given in memory)' });
  const text = (c: Cell) => (c === null || c === undefined ? '' : String(c));
  let table: string[][];
  if (Array.isArray(rows[0])) {
    table = (rows as ReadonlyArray<ReadonlyArray<Cell>>).map((r) => r.map(text));
  } else {
    const headers: string[] = [];
    const seen = new Set<string>();
    for (const r of rows as ReadonlyArray<Readonly<Record<string, Cell>>>) for (const k of Object.keys(r)) if (!seen.has(k)) (seen.add(k), headers.push(k));
    table = [headers, ...(rows as ReadonlyArray<Readonly<Record<string, Cell>>>).map((r) => headers.map((h) => text(r[h])))];
  }
  // Every cell quoted: the reader then keeps text as text (a leading "=" or spaces stay as given).
  return Papa.unparse(table, { quotes: true, newline: '\n' }) + '\n';
}
