/**
 * One `recalc` run, composed in the only safe order (DESIGN.md §2):
 *
 * 1. open every input and fail before anything is written: the method, then the QC
 *    history with its write lock taken (a missing SQLite package, a foreign or busy
 *    history stops the run here);
 * 2. recalculate;
 * 3. stage the run's controls in the history's open transaction, write every output
 *    in one all-or-nothing commit, and commit the history at once after it; a failure
 *    before the outputs are in place rolls the history back (a history file this run
 *    created is removed), so exit 2 keeps meaning that nothing was written.
 *
 * It returns the outcome and never prints or exits: cli.ts chooses the words and the
 * exit code from it.
 */
import { openHistory, type RecordSummary } from './history/store.js';
import { inHouseLimitsOf, trendsWithRun } from './history/trends.js';
import { uncertaintyFromHistory } from './figures/from-history.js';
import { StopError } from './errors.js';
import { loadMethod } from './method/load.js';
import { recalculate, type RecalcResult } from './pipeline.js';
import type { OnProgress } from './progress.js';
import { OUTPUT_KINDS, workbookDeclined, writeOutputs, type CsvDialectChoice, type OutputKind } from './outputs.js';

export interface RecalcRunOptions {
  /** Method file. */
  method: string;
  /** Output folder. */
  out: string;
  /** What to write (default all). */
  outputs?: readonly OutputKind[];
  /** Replace earlier outputs (never an input). */
  force?: boolean;
  /** QC history file: read for trends and in-house limits, and this run recorded in it. */
  history?: string;
  sheet?: string;
  maxBytes?: number;
  maxUnpackedBytes?: number;
  /** The run's time as recorded in the outputs and the history (ISO 8601). */
  timestamp: string;
  /** The command as typed, and phasebook's version, for the Provenance sheet. */
  command: string;
  version: string;
  onProgress?: OnProgress;
  /** Told what the commit did besides writing (a stale lock taken over, leftovers found). */
  onNotice?: (text: string) => void;
  /** The results CSV's dialect (default: as the worklist's). */
  csvDialect?: CsvDialectChoice;
}

export interface RecalcRunOutcome {
  result: RecalcResult;
  /** Outputs written, by kind. */
  written: Record<string, string[]>;
  /** Why the workbook was not written (a worklist longer than a sheet), when it was asked for. */
  workbookDeclined?: string;
  /** The history, when one was given: what was recorded, or why it could not be after the outputs were written. */
  history?: { file: string; recorded?: RecordSummary; notRecorded?: string };
}

export async function runRecalc(worklist: string, options: RecalcRunOptions): Promise<RecalcRunOutcome> {
  const method = loadMethod(options.method);
  const session = options.history ? await openHistory(options.history) : undefined;
  let outcome: RecalcRunOutcome;
  let recorded: RecordSummary | undefined;
  try {
    // A method that judges controls by in-house limits takes them from the history as it was before this run.
    const inHouse = session && method.qc.limitsSource === 'in_house' ? inHouseLimitsOf(session.rows) : undefined;
    // So does the expanded uncertainty of its results (Nordtest figures over the 24 months up to this run).
    const uncertainty = session ? uncertaintyFromHistory(session.rows, { method, until: options.timestamp, historyFile: session.file }) : undefined;
    const result = await recalculate(worklist, {
      method,
      inHouse,
      uncertainty,
      sheet: options.sheet,
      maxBytes: options.maxBytes,
      maxUnpackedBytes: options.maxUnpackedBytes,
      onProgress: options.onProgress,
    });
    const run = { timestamp: options.timestamp, command: options.command, version: options.version };
    const series = session ? trendsWithRun(session.rows, result, { run }) : undefined;
    recorded = session?.stage(result, { timestamp: run.timestamp });
    const written = await writeOutputs(result, {
      outDir: options.out,
      outputs: options.outputs,
      force: options.force,
      run,
      history: series,
      historyFile: options.history,
      onProgress: options.onProgress,
      onNotice: options.onNotice,
      csvDialect: options.csvDialect,
    });
    const asked = (options.outputs ?? OUTPUT_KINDS).includes('xlsx');
    outcome = { result, written, workbookDeclined: asked ? workbookDeclined(result.rowsOut) : undefined };
  } catch (err) {
    session?.abandon();
    throw err;
  }
  // The outputs are in place: the history follows in the same step (no wait in between).
  if (session) {
    try {
      session.commit();
      outcome.history = { file: session.file, recorded };
    } catch (err) {
      const why = err instanceof StopError ? err.describe() : (err as Error).message;
      outcome.history = { file: session.file, notRecorded: why };
    }
  }
  return outcome;
}
