/**
 * `recalc --json`: the run's outcome as one JSON document on stdout, for a lab's
 * scripts (issue 18). Keys are snake_case and stable; numbers are JSON numbers (an
 * empty or non-finite value is null); rows are 1-based spreadsheet rows (the header
 * is row 1), as every message counts them. Nothing else is printed on stdout.
 */
import type { StopError } from '../errors.js';
import type { Flag } from '../issues.js';
import type { Method } from '../domain/method.js';
import type { RecalcRunOutcome } from '../run.js';
import { VERSION } from '../version.js';

const finite = (x: unknown): number | string | null => (typeof x === 'number' ? (Number.isFinite(x) ? x : null) : typeof x === 'string' ? x : null);

export function recalcJson(outcome: RecalcRunOutcome, exitCode: number, label?: string): object {
  const { result, written, history } = outcome;
  const rowNumber = (row: number) => result.raw.rowNumbers[row] ?? row + 2;
  const flagJson = (f: Flag) => ({ code: f.code, column: f.column ?? null, value: finite(f.value), limit: finite(f.limit), message: f.message });
  const v = result.verdict;
  return {
    phasebook: VERSION,
    exit_code: exitCode,
    worklist: { path: label ?? result.worklist.path, name: result.worklist.name, sha256: result.worklist.sha256, bytes: result.worklist.bytes },
    method: { name: result.method.name, file: result.method.file, sha256: result.method.sha256 },
    number_format: { decimal_mark: result.table.numberFormat.decimal, grouping: result.table.numberFormat.grouping, how: result.table.numberFormat.how },
    column_notes: result.columnMap.notes,
    rows_in: result.rowsIn,
    rows_out: result.rowsOut,
    input_errors: result.flags.filter((f) => f.code === 'INPUT_ERROR').map((f) => ({ row: rowNumber(f.row), ...flagJson(f) })),
    failed_controls: v.failedControls.map((c) => ({
      row: rowNumber(c.row),
      sample_id: c.sampleId,
      analyte: c.analyte,
      batch: c.batch,
      sample_type: c.type || null,
      qc_level: c.level || null,
      tolerated_by_run_rule: c.tolerated,
      findings: c.findings.map(flagJson),
    })),
    verdict: {
      verdict: v.verdict,
      label: v.headline.label,
      kind: v.headline.kind,
      sentence: v.headline.sentence,
      reasons: v.reasons,
      batches: v.batches.map((b) => ({ batch: b.batch, verdict: b.verdict, sentence: b.headline.sentence, reasons: b.reasons })),
    },
    outputs: { csv: written.csv ?? [], xlsx: written.xlsx ?? [], html: written.html ?? [] },
    workbook_declined: outcome.workbookDeclined ?? null,
    history: history
      ? {
          file: history.file,
          recorded: history.notRecorded === undefined,
          added: history.recorded?.added ?? 0,
          already_recorded: history.recorded?.alreadyRecorded ?? false,
          not_recorded_because: history.notRecorded ?? null,
        }
      : null,
  };
}

/** The document for a run that stopped (exit 2): what, where, and that nothing was written. */
export function stopJson(err: StopError): object {
  return {
    phasebook: VERSION,
    exit_code: 2,
    stopped: {
      kind: err.kind,
      message: err.message,
      described: err.describe(),
      file: err.location.file ?? null,
      line: err.location.line ?? null,
      column: err.location.column ?? null,
    },
    nothing_written: true,
  };
}

/**
 * `method check --json`: the method as loaded (every default filled in, the lab codes
 * and aliases as the loader reads them), without its text, and the order its formula
 * columns are computed in.
 */
export function methodJson(method: Method, formulaOrder: readonly string[]): object {
  const { text: _text, ...rest } = method;
  return { phasebook: VERSION, method: plain(rest), formula_order: formulaOrder };
}

/** Maps become objects, non-finite numbers null: what JSON can hold. */
function plain(x: unknown): unknown {
  if (x instanceof Map) return Object.fromEntries([...x].map(([k, v]) => [String(k), plain(v)]));
  if (Array.isArray(x)) return x.map(plain);
  if (typeof x === 'number') return Number.isFinite(x) ? x : null;
  if (x !== null && typeof x === 'object') return Object.fromEntries(Object.entries(x).filter(([, v]) => v !== undefined).map(([k, v]) => [k, plain(v)]));
  return x;
}
