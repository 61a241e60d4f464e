/**
 * Results with their expanded uncertainty (issue 16, point 2): the U in percent that
 * applies to each analyte of a run, and the absolute U of every sample result.
 *
 * Where the U comes from, first that applies:
 * 1. the method states a fixed one for the analyte (`expanded_uncertainty_pct`, k = 2);
 * 2. the QC history given to `recalc --history`, as it stood before this run: the Nordtest
 *    figures (figures.ts) of the same method over the 24 months up to the run's time; the
 *    lcs and matrix spike route when it gives a U, else the largest U of the qc levels
 *    that give one (a sample's concentration is not tied to one level, so the least
 *    favourable level is the one that cannot understate it).
 * An analyte with neither has no U: its results carry none rather than a guess.
 *
 * A result's U is U % × |result| / 100, in the result's unit (the Nordtest U is relative:
 * TR 537 states it in percent over the working range).
 */
import type { Method } from '../domain/method.js';
import { COVERAGE_K } from '../method/defaults.js';

export interface AnalyteUncertainty {
  /** The analyte as the method names it (or as the history recorded it). */
  analyte: string;
  /** Expanded uncertainty, percent of the result. */
  pct: number;
  k: number;
  origin: 'method' | 'history';
  /** Where it comes from, in words: the method, or the history with its period and point counts. */
  source: string;
  /** From the history: the file, the end of the period, and the recoveries it was derived from (run order). */
  history?: { file: string; until: string; points: UncertaintyPoint[] };
}

/** A recovery behind a U: what the workbook lists so that verify can derive the U again. */
export interface UncertaintyPoint {
  sampleType: string;
  qcLevel: string;
  recoveryPct: number;
  runTime: string;
  worklistName: string;
  batchId: string;
  sampleId: string;
}

/** The sample types whose recoveries a U is derived from. */
export const POINT_TYPES: ReadonlySet<string> = new Set(['lcs', 'ms', 'msd', 'qc']);

/** Per analyte, keyed by its name in lower case. */
export type UncertaintyTable = ReadonlyMap<string, AnalyteUncertainty>;

/** The column a result's U is computed from (DESIGN.md §4). */
export const RESULT_COLUMN = 'pre_extraction_conc';

/** The U per analyte for a run: the method's fixed ones over those from the history. */
export function uncertaintyTable(method: Method, fromHistory?: UncertaintyTable): Map<string, AnalyteUncertainty> {
  const out = new Map(fromHistory ?? []);
  for (const a of method.analytes) {
    if (a.expanded_uncertainty_pct === undefined) continue;
    out.set(a.name.toLowerCase(), {
      analyte: a.name,
      pct: a.expanded_uncertainty_pct,
      k: COVERAGE_K,
      origin: 'method',
      source: `stated by the method (analytes.${a.name}.expanded_uncertainty_pct)`,
    });
  }
  return out;
}

/**
 * The absolute U of every sample result (result's unit) and its k; NaN on other rows,
 * on a sample without a numerical result, and for an analyte without a U.
 */
export function expandedUncertaintyColumns(input: {
  rowCount: number;
  sampleType: readonly string[];
  analyte: readonly string[];
  surrogate: ArrayLike<number>;
  result: Float64Array;
  table: UncertaintyTable;
}): { expanded: Float64Array; k: Float64Array } {
  const expanded = new Float64Array(input.rowCount).fill(NaN);
  const k = new Float64Array(input.rowCount).fill(NaN);
  for (let r = 0; r < input.rowCount; r++) {
    if (input.sampleType[r] !== 'sample' || input.surrogate[r] === 1) continue;
    const x = input.result[r]!;
    const u = input.table.get(input.analyte[r]!.trim().toLowerCase());
    if (!u || !Number.isFinite(x)) continue;
    expanded[r] = (u.pct / 100) * Math.abs(x);
    k[r] = u.k;
  }
  return { expanded, k };
}
