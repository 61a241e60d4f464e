/**
 * The lab's own figures per method and analyte, from its QC history (DESIGN.md §10):
 * the Nordtest measurement uncertainty (nordtest.ts) and the method detection limit
 * of 40 CFR 136 Appendix B Rev. 2 (mdl.ts), over the runs of a period (by default the
 * 24 months up to now: the procedure's "last 24 months").
 *
 * Which points, per method (the name each run recorded) and analyte:
 * - u(Rw): the recoveries of every lcs row; each qc level its own qc rows;
 * - bias: the recoveries of every ms and msd row;
 * - MDL_s: the results of every mdl row; MDL_b: the results of every method blank.
 * Every recorded control counts, passed or failed: leaving out the ones that failed
 * would make the scatter look smaller than the lab's results really are. A surrogate
 * analyte has no figures (its blanks carry a recovery, not contamination).
 *
 * What each method asks for (u(Cref), the minimum points, a fixed U) comes from the text
 * of the method the history recorded with its latest run in the period; a history
 * written before schema version 3 holds no method text, and the defaults apply.
 */
import { compareLevels } from '../domain/fields.js';
import { parseMethod } from '../method/load.js';
import type { Method } from '../domain/method.js';
import type { HistoryRow } from '../history/records.js';
import type { RecordedMethod } from '../history/store.js';
import { methodDetectionLimit, type Mdl } from './mdl.js';
import { DEFAULT_MIN_BIAS, DEFAULT_MIN_RW, uncertaintyFromRecoveries, uncertaintyOfLevel, type Uncertainty } from './nordtest.js';

/** The procedure's period of ongoing data: the last 24 months. */
export const DEFAULT_MONTHS = 24;

export interface FigureSettings {
  minPointsRw: number;
  minPointsBias: number;
  /** By analyte name (lower case). */
  analytes: Map<string, { spikeUncertaintyPct?: number; expandedUncertaintyPct?: number; surrogate: boolean }>;
  /** Where the settings came from, in words. */
  source: string;
}

export interface FigureEntry {
  method: string;
  analyte: string;
  /** The concentration unit of the mdl and blank results ('' when none is known). */
  unit: string;
  /** The lcs/ms route. */
  uncertainty: Uncertainty;
  /** True when the method states the spike's uncertainty; false: 0 by default. */
  spikeUncertaintyStated: boolean;
  /** One per qc level, in the order of their names. */
  levels: Array<{ level: string; uncertainty: Uncertainty }>;
  /** A U the method states for the analyte (percent, k = 2), used instead of a derived one. */
  fixedExpandedPct?: number;
  mdl: Mdl;
  /** Blanks and mdl rows recorded before schema version 3, whose results were not kept. */
  pointsWithoutResult: number;
  settingsSource: string;
}

export interface Period {
  /** ISO 8601, inclusive. */
  since: string;
  until: string;
}

/** The default period: the 24 calendar months up to `until` (default now). */
export function defaultPeriod(until: Date = new Date()): Period {
  const since = new Date(until);
  since.setUTCMonth(since.getUTCMonth() - DEFAULT_MONTHS);
  return { since: since.toISOString(), until: until.toISOString() };
}

/** The rows of runs inside the period (run time, inclusive at both ends). */
export function rowsInPeriod<T extends Pick<HistoryRow, 'runTime'>>(rows: readonly T[], period: Period): T[] {
  const from = Date.parse(period.since);
  const to = Date.parse(period.until);
  return rows.filter((r) => {
    const t = Date.parse(r.runTime);
    return t >= from && t <= to;
  });
}

/** The settings a method asks for; the defaults when there is no method. */
export function settingsOf(method: Method | undefined, source: string): FigureSettings {
  const analytes: FigureSettings['analytes'] = new Map();
  for (const a of method?.analytes ?? []) {
    analytes.set(a.name.toLowerCase(), { spikeUncertaintyPct: a.spike_uncertainty_pct, expandedUncertaintyPct: a.expanded_uncertainty_pct, surrogate: a.surrogate });
  }
  return {
    minPointsRw: method?.figures.minPointsRw ?? DEFAULT_MIN_RW,
    minPointsBias: method?.figures.minPointsBias ?? DEFAULT_MIN_BIAS,
    analytes,
    source,
  };
}

/**
 * Settings per method name: the text the history recorded with the method's latest run
 * among `rows` (run order), read again; the defaults when the history holds none or the
 * text cannot be read by this phasebook (said in `source`).
 */
export function settingsFromHistory(rows: readonly HistoryRow[], methods: ReadonlyMap<string, RecordedMethod>): Map<string, FigureSettings> {
  const latest = new Map<string, string>();
  for (const r of rows) latest.set(r.methodName, r.methodSha256);
  const out = new Map<string, FigureSettings>();
  for (const [name, sha] of latest) {
    const recorded = methods.get(sha);
    if (!recorded) {
      out.set(name, settingsOf(undefined, 'defaults: the history holds no text of this method (runs recorded before schema version 3)'));
      continue;
    }
    try {
      const method = parseMethod(recorded.text, { file: `method "${name}" as recorded in the history` });
      out.set(name, settingsOf(method, `the method as recorded with its latest run (SHA-256 ${sha.slice(0, 12)}…)`));
    } catch (err) {
      out.set(name, settingsOf(undefined, `defaults: the recorded method text could not be read (${(err as Error).message})`));
    }
  }
  return out;
}

/** The figures of every method and analyte among `rows` (already limited to the period). */
export function computeFigures(rows: readonly HistoryRow[], settings: ReadonlyMap<string, FigureSettings>): FigureEntry[] {
  const groups = new Map<string, HistoryRow[]>();
  for (const r of rows) {
    const key = `${r.methodName}\u0000${r.analyte}`;
    const g = groups.get(key);
    if (g) g.push(r);
    else groups.set(key, [r]);
  }
  const entries: FigureEntry[] = [];
  for (const g of groups.values()) {
    const first = g[0]!;
    const s = settings.get(first.methodName) ?? settingsOf(undefined, 'defaults');
    const a = s.analytes.get(first.analyte.toLowerCase());
    if (a?.surrogate) continue;
    entries.push(figuresOf(first.methodName, first.analyte, g, s));
  }
  return entries.sort((x, y) => cmp(x.method, y.method) || cmp(x.analyte, y.analyte));
}

/** The figures of one method and analyte from its rows. */
export function figuresOf(method: string, analyte: string, rows: readonly HistoryRow[], s: FigureSettings): FigureEntry {
  const a = s.analytes.get(analyte.toLowerCase());
  const uCrefPct = a?.spikeUncertaintyPct ?? 0;
  const options = { uCrefPct, minRw: s.minPointsRw, minBias: s.minPointsBias };
  const recoveries = (types: readonly string[]) => rows.filter((r) => types.includes(r.sampleType) && Number.isFinite(r.recoveryPct)).map((r) => r.recoveryPct);
  const uncertainty = uncertaintyFromRecoveries(recoveries(['lcs']), recoveries(['ms', 'msd']), options);

  const byLevel = new Map<string, number[]>();
  for (const r of rows) {
    if (r.sampleType !== 'qc' || !Number.isFinite(r.recoveryPct)) continue;
    const level = r.qcLevel.trim().toLowerCase();
    const list = byLevel.get(level);
    if (list) list.push(r.recoveryPct);
    else byLevel.set(level, [r.recoveryPct]);
  }
  // Levels in concentration order (lloq, low, mid, high), as every other output lists them.
  const levels = [...byLevel.entries()].sort(([x], [y]) => compareLevels(x, y)).map(([level, xs]) => ({ level, uncertainty: uncertaintyOfLevel(xs, options) }));

  // Detection limit: results with their unit; a row without a kept result (before version 3) is counted apart.
  const spikes: number[] = [];
  const blanks: number[] = [];
  let spikesNotDetected = 0;
  let blanksNotDetected = 0;
  let pointsWithoutResult = 0;
  const units = new Set<string>();
  for (const r of rows) {
    if (r.sampleType !== 'mdl' && r.sampleType !== 'blank') continue;
    if (r.nondetect === undefined) {
      pointsWithoutResult++;
      continue;
    }
    const isSpike = r.sampleType === 'mdl';
    if (r.nondetect) {
      if (isSpike) spikesNotDetected++;
      else blanksNotDetected++;
    } else if (Number.isFinite(r.result)) {
      (isSpike ? spikes : blanks).push(r.result);
    } else continue; // an input error: no measurement
    units.add(r.concentrationUnit);
  }
  let mdl = methodDetectionLimit({ spikes, spikesNotDetected, blanks, blanksNotDetected });
  if (units.size > 1) {
    // Results in different units cannot be pooled; converting them is the method's business, not a guess here.
    mdl = { ...mdl, mdlS: NaN, mdlB: NaN, mdl: NaN, reasons: [`the results were recorded in more than one unit (${[...units].map((u) => `"${u}"`).join(', ')}): no detection limit`] };
  }
  const unit = units.size === 1 ? [...units][0]! : (rows[rows.length - 1]?.concentrationUnit ?? '');
  return {
    method,
    analyte,
    unit,
    uncertainty,
    spikeUncertaintyStated: a?.spikeUncertaintyPct !== undefined,
    levels,
    fixedExpandedPct: a?.expandedUncertaintyPct,
    mdl,
    pointsWithoutResult,
    settingsSource: s.source,
  };
}

function cmp(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

/** The `--json` shape of one entry; numbers that cannot be given are null. */
export interface FigureJson {
  method: string;
  analyte: string;
  uncertainty: UncertaintyJson;
  levels: Array<{ level: string; uncertainty: UncertaintyJson }>;
  fixed_U_pct: number | null;
  mdl: {
    mdl_s: number | null;
    mdl_b: number | null;
    mdl: number | null;
    n_spikes: number;
    n_blanks: number;
    unit: string;
    blanks_rule: string | null;
    more_spikes_needed: number;
    more_blanks_needed: number;
    reasons: string[];
  };
  points_without_result: number;
  settings: string;
}

export interface UncertaintyJson {
  u_rw_pct: number | null;
  u_bias_pct: number | null;
  u_c_pct: number | null;
  U_pct: number | null;
  k: number;
  n_rw: number;
  n_bias: number;
  u_cref_pct: number;
  u_cref_source: 'method' | 'default';
  more_rw_needed: number;
  more_bias_needed: number;
}

export function figuresJson(entries: readonly FigureEntry[]): FigureJson[] {
  return entries.map((e) => {
    const u = (x: Uncertainty): UncertaintyJson => ({
      u_rw_pct: orNull(x.uRwPct),
      u_bias_pct: orNull(x.uBiasPct),
      u_c_pct: orNull(x.ucPct),
      U_pct: orNull(x.expandedPct),
      k: x.k,
      n_rw: x.nRw,
      n_bias: x.nBias,
      u_cref_pct: x.uCrefPct,
      u_cref_source: e.spikeUncertaintyStated ? 'method' : 'default',
      more_rw_needed: x.moreRw,
      more_bias_needed: x.moreBias,
    });
    return {
      method: e.method,
      analyte: e.analyte,
      uncertainty: u(e.uncertainty),
      levels: e.levels.map((l) => ({ level: l.level, uncertainty: u(l.uncertainty) })),
      fixed_U_pct: e.fixedExpandedPct ?? null,
      mdl: {
        mdl_s: orNull(e.mdl.mdlS),
        mdl_b: orNull(e.mdl.mdlB),
        mdl: orNull(e.mdl.mdl),
        n_spikes: e.mdl.nSpikes,
        n_blanks: e.mdl.nBlanks,
        unit: e.unit,
        blanks_rule: e.mdl.blanksRule ?? null,
        more_spikes_needed: e.mdl.moreSpikes,
        more_blanks_needed: e.mdl.moreBlanks,
        reasons: e.mdl.reasons,
      },
      points_without_result: e.pointsWithoutResult,
      settings: e.settingsSource,
    };
  });
}

function orNull(x: number): number | null {
  return Number.isFinite(x) ? x : null;
}
