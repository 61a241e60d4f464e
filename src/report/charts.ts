/**
 * The report's charts as Vega-Lite specifications: plain data, drawn to SVG by
 * svg.ts (through draw.ts, on a worker thread when the command line asks for one).
 * The SVG goes inline into the HTML, so the report needs nothing from outside.
 *
 * Every layer has a name; the SVG renderer puts each layer's items into
 * `<g class="… <name>_marks">`, which is how the browser test counts them.
 */
import type { TopLevelSpec } from 'vega-lite';
import type { TrendSeries } from '../history/trends.js';

/** Our plain palette. */
const INK = '#1f2a36';
const MUTED = '#7b8794';
const BAND = '#d5dde6';
const BAD = '#a4262c';
const WARN = '#b86e00';

const CONFIG = {
  font: 'system-ui, -apple-system, "Segoe UI", sans-serif',
  background: '#ffffff',
  view: { stroke: null },
  axis: { labelColor: INK, titleColor: INK, domainColor: MUTED, tickColor: MUTED, gridColor: '#eceff3', labelFontSize: 11, titleFontSize: 11, titleFontWeight: 600 },
  legend: { labelColor: INK, titleColor: INK, labelFontSize: 11, titleFontSize: 11, labelLimit: 260, orient: 'bottom', direction: 'horizontal' },
} as const;

/** One control of this batch in the recovery chart. */
export interface RecoveryPoint {
  /** Axis label, unique within the chart. */
  label: string;
  sampleId: string;
  sampleType: string;
  /** 1-based spreadsheet row. */
  rowNumber: number;
  value: number;
  /** Recovery limits that judged it; NaN when none applied. */
  low: number;
  high: number;
}

/** Layer names, so tests and the browser check can find the marks. */
export const RECOVERY_LAYERS = { limits: 'limits', points: 'recoveries' } as const;
export const CONTROL_LAYERS = { lines: 'limit_lines', points: 'points', violations: 'violations' } as const;

/** This batch's recoveries of one analyte, each against its own limits (a bar from low to high). */
export function recoveryChartSpec(points: readonly RecoveryPoint[], options: { analyte: string }): TopLevelSpec {
  const values = points.map((p) => {
    const hasLimits = Number.isFinite(p.low) && Number.isFinite(p.high);
    const outcome = !hasLimits ? 'no limits' : p.value < p.low || p.value > p.high ? 'outside limits' : 'within limits';
    return {
      label: p.label,
      value: p.value,
      low: hasLimits ? p.low : null,
      high: hasLimits ? p.high : null,
      outcome,
      description: `${p.sampleId} (${p.sampleType}, row ${p.rowNumber}): recovery ${p.value.toFixed(1)} %` +
        (hasLimits ? `, limits ${p.low}–${p.high} %` : ''),
    };
  });
  const x = { field: 'label', type: 'nominal', sort: null, title: 'Control', axis: { labelAngle: -35, labelLimit: 0 } } as const; // labels are whole: html.ts shortens long ids itself, keeping both ends
  return {
    width: Math.min(900, Math.max(220, 36 * values.length)),
    height: 200,
    config: CONFIG,
    description: `Recoveries of ${options.analyte} in this batch against their acceptance limits`,
    data: { values },
    encoding: { x },
    layer: [
      {
        name: RECOVERY_LAYERS.limits,
        transform: [{ filter: 'datum.low != null' }],
        mark: { type: 'rule', strokeWidth: 9, color: BAND, strokeCap: 'butt' },
        encoding: {
          y: { field: 'low', type: 'quantitative' },
          y2: { field: 'high' },
          description: { field: 'description' },
        },
      },
      {
        name: RECOVERY_LAYERS.points,
        mark: { type: 'point', filled: true, size: 70, opacity: 1 },
        encoding: {
          y: { field: 'value', type: 'quantitative', title: 'Recovery (%)', scale: { zero: false, padding: 12 }, axis: { format: '~r' } },
          color: {
            field: 'outcome',
            type: 'nominal',
            title: null,
            scale: { domain: ['within limits', 'outside limits', 'no limits'], range: [INK, BAD, MUTED] },
          },
          shape: {
            field: 'outcome',
            type: 'nominal',
            title: null,
            scale: { domain: ['within limits', 'outside limits', 'no limits'], range: ['circle', 'cross', 'diamond'] },
          },
          description: { field: 'description' },
        },
      },
    ],
  } as TopLevelSpec;
}

/**
 * A control chart of one series in run order: the mean, ±2s (warning) and ±3s
 * (control) lines, the points (this batch's in ink, earlier ones muted) and a
 * ring around each point that broke a Westgard rule.
 */
export function controlChartSpec(series: TrendSeries, options: { isCurrent: (index: number) => boolean }): TopLevelSpec {
  const { limits } = series;
  const rulesAt = new Map<number, { rules: string[]; reject: boolean }>();
  for (const v of series.violations) {
    const e = rulesAt.get(v.index) ?? { rules: [], reject: false };
    e.rules.push(v.rule);
    if (v.severity === 'reject') e.reject = true;
    rulesAt.set(v.index, e);
  }
  const values = series.points.map((p, i) => {
    const broken = rulesAt.get(i);
    return {
      i: i + 1,
      value: p.value,
      batch: options.isCurrent(i) ? 'this batch' : 'earlier batches',
      severity: broken ? (broken.reject ? 'rejection rule' : 'warning (1-2s)') : '',
      description:
        `point ${i + 1}, batch ${p.batchId}, ${p.sampleId}: recovery ${p.value.toFixed(1)} %` +
        (broken ? `; rules broken: ${broken.rules.join(', ')}` : ''),
    };
  });
  const lines: Array<{ y: number; kind: string; label: string }> = [];
  if (Number.isFinite(limits.mean)) lines.push({ y: limits.mean, kind: 'mean', label: `mean ${limits.mean.toFixed(1)}` });
  if (limits.sufficient) {
    for (const k of [3, 2, -2, -3]) {
      const y = limits.mean + k * limits.sd;
      lines.push({ y, kind: Math.abs(k) === 2 ? '±2s (warning)' : '±3s (control)', label: `${k > 0 ? '+' : '−'}${Math.abs(k)}s ${y.toFixed(1)}` });
    }
  }
  const n = values.length;
  const x = { field: 'i', type: 'quantitative', title: 'Point, in run order', scale: { domain: [0.5, n + 0.5], nice: false }, axis: { tickMinStep: 1, format: 'd' } } as const;
  return {
    width: Math.min(900, Math.max(320, 14 * n)),
    height: 220,
    config: CONFIG,
    description: `Control chart of ${series.analyte} ${series.sampleType}${series.level ? ` level ${series.level}` : ""} recoveries in run order`,
    layer: [
      {
        name: CONTROL_LAYERS.lines,
        data: { values: lines },
        mark: { type: 'rule', strokeWidth: 1.2 },
        encoding: {
          y: { field: 'y', type: 'quantitative' },
          strokeDash: {
            field: 'kind',
            type: 'nominal',
            title: null,
            scale: { domain: ['mean', '±2s (warning)', '±3s (control)'], range: [[1, 0], [5, 3], [2, 2]] },
          },
          color: {
            field: 'kind',
            type: 'nominal',
            title: null,
            scale: { domain: ['mean', '±2s (warning)', '±3s (control)'], range: [INK, WARN, BAD] },
            legend: null,
          },
          description: { field: 'label' },
        },
      },
      {
        name: 'limit_labels',
        data: { values: lines },
        mark: { type: 'text', align: 'left', dx: 4, fontSize: 10, color: MUTED },
        encoding: { y: { field: 'y', type: 'quantitative' }, x: { value: Math.min(900, Math.max(320, 14 * n)) }, text: { field: 'label' } },
      },
      {
        data: { values },
        layer: [
          { name: 'series_line', mark: { type: 'line', color: BAND, strokeWidth: 1 }, encoding: { x, y: { field: 'value', type: 'quantitative' } } },
          {
            name: CONTROL_LAYERS.points,
            mark: { type: 'point', filled: true, size: 36, opacity: 1 },
            encoding: {
              x,
              y: { field: 'value', type: 'quantitative', title: 'Recovery (%)', scale: { zero: false, padding: 8 }, axis: { format: '~r' } },
              fill: { field: 'batch', type: 'nominal', title: null, scale: { domain: ['this batch', 'earlier batches'], range: [INK, MUTED] } },
              description: { field: 'description' },
            },
          },
          {
            name: CONTROL_LAYERS.violations,
            transform: [{ filter: "datum.severity != ''" }],
            mark: { type: 'point', filled: false, size: 190, strokeWidth: 2 },
            encoding: {
              x,
              y: { field: 'value', type: 'quantitative' },
              stroke: { field: 'severity', type: 'nominal', title: null, scale: { domain: ['rejection rule', 'warning (1-2s)'], range: [BAD, WARN] } },
              description: { field: 'description' },
            },
          },
        ],
      },
    ],
    resolve: { scale: { color: 'independent' } },
  } as TopLevelSpec;
}

export const UNCERTAINTY_LAYERS = { reference: 'reference_line', points: 'figure_points' } as const;

/** A recovery behind an expanded uncertainty (qc/uncertainty.ts), in run order. */
export interface FigurePoint {
  /** What it feeds: 'u(Rw): lcs', 'bias: ms, msd', or 'qc <level>'. */
  role: string;
  value: number;
  description: string;
}

/**
 * The recoveries behind one analyte's expanded uncertainty, in run order: their scatter
 * is u(Rw), their distance from the 100 % line the bias (Nordtest TR 537).
 */
export function uncertaintyChartSpec(points: readonly FigurePoint[], options: { analyte: string }): TopLevelSpec {
  const values = points.map((p, i) => ({ i: i + 1, value: p.value, role: p.role, description: p.description }));
  const n = values.length;
  const roles = [...new Set(values.map((v) => v.role))].sort();
  const x = { field: 'i', type: 'quantitative', title: 'Point, in run order', scale: { domain: [0.5, n + 0.5], nice: false }, axis: { tickMinStep: 1, format: 'd' } } as const;
  return {
    width: Math.min(900, Math.max(320, 8 * n)),
    height: 200,
    config: CONFIG,
    description: `Recoveries behind the expanded uncertainty of ${options.analyte}, in run order, against 100 %`,
    layer: [
      {
        name: UNCERTAINTY_LAYERS.reference,
        data: { values: [{ y: 100 }] },
        mark: { type: 'rule', strokeWidth: 1.2, color: MUTED, strokeDash: [4, 3] },
        encoding: { y: { field: 'y', type: 'quantitative' } },
      },
      {
        name: UNCERTAINTY_LAYERS.points,
        data: { values },
        mark: { type: 'point', filled: true, size: 30, opacity: 0.9 },
        encoding: {
          x,
          y: { field: 'value', type: 'quantitative', title: 'Recovery (%)', scale: { zero: false, padding: 8 }, axis: { format: '~r' } },
          color: { field: 'role', type: 'nominal', title: null, scale: { domain: roles, range: [INK, WARN, BAD, MUTED].slice(0, Math.max(1, roles.length)) } },
          description: { field: 'description' },
        },
      },
    ],
  } as TopLevelSpec;
}
