/**
 * The HTML report: one self-contained file per batch, readable offline. It holds
 * the batch verdict, the summary and flags tables, per analyte a chart of this
 * batch's recoveries against their limits and, with a QC history, a control
 * chart per control type with the mean, ±2s and ±3s lines and the Westgard rule
 * violations marked.
 *
 * Self-contained: inline CSS, inline SVG, no scripts, no external URL; a
 * Content-Security-Policy forbids loading anything. Every piece of worklist and
 * method text is escaped (markup.ts).
 */
import { pushTo } from '../group.js';
import { significant } from '../format.js';
import { writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { MIN_POINTS, type TrendSeries } from '../history/trends.js';
import type { Flag } from '../issues.js';
import type { RecalcResult } from '../pipeline.js';
import type { GroupSummary } from '../summary/summarize.js';
import type { WriteJob } from '../write/atomic.js';
import type { RunInfo } from '../write/workbook/index.js';
import { CONTROL_LAYERS, RECOVERY_LAYERS, UNCERTAINTY_LAYERS, controlChartSpec, recoveryChartSpec, uncertaintyChartSpec, type RecoveryPoint } from './charts.js';
import { drawChart } from './draw.js';
import { html, trusted, type Markup } from './markup.js';
import { REPORT_CSS } from './style.js';
import { RESULT_COLUMN } from '../qc/uncertainty.js';

export interface ReportOptions {
  /** The batch to report (default the first batch of the worklist). */
  batch?: string;
  /** Series from the QC history (see history/trends.ts); without it the report has no control charts. */
  history?: readonly TrendSeries[];
  run: RunInfo;
}

export interface ReportJobOptions {
  outDir: string;
  /** File name stem, usually the worklist's name without extension. */
  stem: string;
  history?: readonly TrendSeries[];
  run: RunInfo;
}

const CSP = "default-src 'none'; style-src 'unsafe-inline'; img-src data:; base-uri 'none'; form-action 'none'";

/** Batch ids in the order they first appear in the worklist. */
export function reportBatches(result: RecalcResult): string[] {
  const batches = [...batchIndex(result).rows.keys()];
  return batches.length ? batches : [''];
}

/**
 * One path per batch: `<stem>.report.html` for a worklist without batch ids,
 * else `<stem>.<batch>.report.html`, the batch id reduced to letters, digits,
 * `.`, `_` and `-` (a clash gets `-2`, `-3`, … compared without case).
 */
export function htmlReportPaths(result: RecalcResult, options: { outDir: string; stem: string }): Array<{ batch: string; path: string }> {
  const batches = reportBatches(result);
  if (batches.length === 1 && batches[0] === '') return [{ batch: '', path: join(options.outDir, `${options.stem}.report.html`) }];
  const used = new Set<string>();
  return batches.map((batch) => {
    const base = batch.normalize('NFKD').replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^[-.]+|[-.]+$/g, '').slice(0, 60) || 'batch';
    let slug = base;
    for (let k = 2; used.has(slug.toLowerCase()); k++) slug = `${base}-${k}`;
    used.add(slug.toLowerCase());
    return { batch, path: join(options.outDir, `${options.stem}.${slug}.report.html`) };
  });
}

/**
 * Write jobs for the reports, to join the other outputs in one all-or-nothing
 * commit (write/atomic.ts). Each job makes its report when its turn comes, so one
 * report at a time is held in memory.
 */
export function htmlReportJobs(result: RecalcResult, options: ReportJobOptions): WriteJob[] {
  return htmlReportPaths(result, options).map(({ batch, path }) => ({
    target: path,
    write: async (tmp: string) => {
      const text = await renderReport(result, { batch, history: options.history, run: options.run });
      await writeFile(tmp, text, 'utf8');
    },
  }));
}

/** The whole report of one batch as an HTML document. */
export async function renderReport(result: RecalcResult, options: ReportOptions): Promise<string> {
  const batch = options.batch ?? reportBatches(result)[0]!;
  const index = batchIndex(result);
  const rows = index.rows.get(batch) ?? [];
  const groups = index.groups.get(batch) ?? [];
  const failed = groups.filter((g) => g.verdict === 'fail');
  const verdict = failed.length ? 'fail' : 'pass';
  const headline = result.verdict.batches.find((b) => b.batch === batch)?.headline ?? result.verdict.headline;
  const failedControls = result.verdict.failedControls.filter((c) => c.batch === batch);
  const analytes = [...new Set(rows.map((r) => text(result, 'analyte', r)))];
  const flags = index.flags.get(batch) ?? [];
  const title = batch ? `Batch ${batch}` : `Worklist ${result.worklist.name}`;

  // The report's charts, each drawn once (draw.ts).
  const history = options.history;
  const [recoverySections, historySections, uncertainty] = await Promise.all([
    Promise.all(analytes.map((analyte) => recoverySection(result, rows, analyte))),
    history ? Promise.all(analytes.map((analyte) => historySection(result, batch, history, analyte))) : [],
    uncertaintySection(result, rows, analytes),
  ]);
  const m = result.method;

  const doc = html`<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="${CSP}">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="phasebook ${options.run.version}">
<title>${title}: ${verdict.toUpperCase()} (phasebook report)</title>
<style>${trusted(REPORT_CSS)}</style>
</head>
<body>
<main>
<header>
<h1>${title}</h1>
<p class="lead">QC report of ${result.worklist.name}, recalculated with method ${m.title || m.name}</p>
<p><span class="verdict ${verdict}" id="verdict">${headline.label}</span> <span id="headline">${headline.sentence}</span></p>
${failed.length ? html`<ul class="reasons">${failed.map((g) => html`<li><strong>${g.analyte}</strong>: ${g.reasons.join('; ')}</li>`)}</ul>` : ''}
${
  failedControls.length
    ? html`<section id="failed-controls"><h2>Failed controls</h2><ul class="failed">${failedControls.map(
        (c) => html`<li><strong>${c.sampleId}</strong> (${c.type === 'qc' && c.level ? `qc ${c.level}` : c.type || 'unknown type'}), ${c.analyte}${c.tolerated ? ', tolerated by the run rule' : ''}: ${c.findings.map((f) => `${f.code}: ${f.message}`).join('; ') || 'failed'}</li>`,
      )}</ul></section>`
    : ''
}
<dl class="facts">
<dt>Worklist</dt><dd>${result.worklist.name} (${result.worklist.bytes} bytes)</dd>
<dt>Worklist SHA-256</dt><dd class="mono">${result.worklist.sha256}</dd>
<dt>Method</dt><dd>${m.name}${m.version !== undefined ? `, version ${m.version}` : ''}${m.title && m.title !== m.name ? ` (${m.title})` : ''}</dd>
<dt>Method SHA-256</dt><dd class="mono">${m.sha256}</dd>
<dt>Rows in this batch</dt><dd>${rows.length} of ${result.rowsOut}</dd>
<dt>Run time</dt><dd>${options.run.timestamp}</dd>
<dt>phasebook</dt><dd>${options.run.version}</dd>
</dl>
</header>
<section id="summary">
<h2>Summary</h2>
${summaryTable(groups)}
</section>
<section id="results">
<h2>Results as reported</h2>
<p class="note">Every row of this batch: the result rounded as the method reports it (${m.reporting.significantFigures} significant figures, in ${m.units.concentration}); the unrounded numbers are in the results CSV and the workbook.</p>
${resultsTable(result, rows)}
</section>
<section id="flags">
<h2>Flags</h2>
${flagsTable(result, flags)}
</section>
${uncertainty}
<section id="recoveries">
<h2>Recoveries in this batch</h2>
<p class="note">Each bar spans the acceptance limits that judged that control; the mark is its recovery.</p>
${recoverySections}
</section>
${
  options.history
    ? html`<section id="history">
<h2>Across runs: control charts</h2>
<p class="note">Recoveries from the QC history in run order, this batch in dark marks. Lines: mean, &plusmn;2s (warning) and &plusmn;3s (control), from all points of the series once it has ${MIN_POINTS} or more (US EPA SW-846 Method 8000 practice). Rings mark points that broke a Westgard rule (Westgard et al., Clin. Chem. 1981).</p>
${historySections}
</section>`
    : ''
}
<footer>Written by phasebook ${options.run.version} at ${options.run.timestamp}. This file is complete in itself: no scripts, nothing loaded from elsewhere.</footer>
</main>
</body>
</html>
`;
  return doc.text;
}

/**
 * The batch's sample results with their expanded uncertainty (qc/uncertainty.ts), and
 * where each analyte's U comes from; nothing when the run has none.
 */
async function uncertaintySection(result: RecalcResult, rows: readonly number[], analytes: readonly string[]): Promise<Markup | string> {
  const u = result.uncertainty;
  if (!u) return '';
  // Per analyte of this batch whose U comes from the history: the recoveries behind it, as a chart.
  const charts = await Promise.all(
    analytes.map(async (analyte) => {
      const a = u.byAnalyte.get(analyte.trim().toLowerCase());
      const points = a?.history?.points ?? [];
      if (points.length === 0) return '';
      const figurePoints = points.map((p) => ({
        role: p.sampleType === 'lcs' ? 'u(Rw): lcs' : p.sampleType === 'qc' ? `qc ${p.qcLevel || '(no level)'}` : 'bias: ms, msd',
        value: p.recoveryPct,
        description: `${p.runTime.slice(0, 10)}, batch ${p.batchId}, ${p.sampleId} (${p.sampleType}): recovery ${p.recoveryPct.toFixed(1)} %`,
      }));
      const svg = await drawChart(uncertaintyChartSpec(figurePoints, { analyte }));
      return html`<figure class="chart" data-chart="uncertainty" data-analyte="${analyte}" data-points="${points.length}" data-layer="${UNCERTAINTY_LAYERS.points}">
${trusted(svg)}
<figcaption>${analyte}: the ${points.length} recoveries behind U = ${significant(a!.pct, 4)} % (k = ${a!.k}), in run order. Their scatter gives u(Rw), their distance from 100 % the bias.</figcaption>
</figure>`;
    }),
  );
  const conc = result.computed.get(RESULT_COLUMN);
  const withU = rows.filter((r) => Number.isFinite(u.expanded[r]!));
  const show = (x: number) => (Number.isFinite(x) ? significant(x, 4) : '');
  return html`<section id="uncertainty">
<h2>Results with their expanded uncertainty</h2>
<ul class="sources">${[...u.byAnalyte.values()].map((a) => html`<li><strong>${a.analyte}</strong>: U = ${significant(a.pct, 4)} % of the result (k = ${a.k}), ${a.source}</li>`)}</ul>
${
  withU.length
    ? html`<table id="uncertainty-table"><thead><tr><th>sample</th><th>analyte</th><th>${RESULT_COLUMN} [${u.unit}]</th><th>expanded uncertainty U [${u.unit}]</th><th>k</th></tr></thead><tbody>${withU.map(
        (r) => html`<tr><td>${text(result, 'sample_id', r)}</td><td>${text(result, 'analyte', r)}</td><td class="num">${show(conc?.[r] ?? NaN)}</td><td class="num">${show(u.expanded[r]!)}</td><td class="num">${show(u.k[r]!)}</td></tr>`,
      )}</tbody></table>`
    : html`<p class="note">No sample result of this batch has an expanded uncertainty.</p>`
}
${charts}
</section>`;
}

/** Each batch's rows, summary groups and flags, in worklist order. */
interface BatchIndex {
  rows: Map<string, number[]>;
  groups: Map<string, GroupSummary[]>;
  flags: Map<string, Flag[]>;
}

const batchIndexes = new WeakMap<RecalcResult, BatchIndex>();

/**
 * Built once per result: a worklist of thousands of batches gets one report each,
 * and looking each batch's rows up by scanning the whole worklist made the reports
 * quadratic in its length.
 */
function batchIndex(result: RecalcResult): BatchIndex {
  const known = batchIndexes.get(result);
  if (known) return known;
  const ids = result.table.texts.get('batch_id');
  const batchOf = (r: number) => ids?.[r] ?? '';
  const index: BatchIndex = { rows: new Map(), groups: new Map(), flags: new Map() };
  for (let r = 0; r < result.rowsOut; r++) pushTo(index.rows, batchOf(r), r);
  for (const g of result.groups) pushTo(index.groups, g.batch, g);
  for (const f of result.flags) if (f.row >= 0 && f.row < result.rowsOut) pushTo(index.flags, batchOf(f.row), f);
  batchIndexes.set(result, index);
  return index;
}

function text(result: RecalcResult, field: string, r: number): string {
  return result.table.texts.get(field)?.[r] ?? '';
}

function summaryTable(groups: readonly GroupSummary[]): Markup {
  if (groups.length === 0) return html`<p class="note">No rows.</p>`;
  return html`<table id="summary-table">
<thead><tr><th>Analyte</th><th>Verdict</th><th>Rows</th><th>Recovery (%)</th><th class="num">Max RPD (%)</th><th>Blank</th><th class="num">Mean E (%)</th><th>Reasons</th></tr></thead>
<tbody>
${groups.map(
  (g) => html`<tr class="${g.verdict}"><td>${g.analyte}</td><td class="status">${g.verdict.toUpperCase()}</td><td>${counts(g)}</td><td>${g.recoveries.length ? g.recoveries.map((s) => html`<div>${recoveryText(s)}</div>`) : '–'}</td><td class="num">${num(g.maxRpd, 1)}</td><td>${g.blankStatus}</td><td class="num">${num(g.meanEfficiencyPct, 1)}</td><td>${g.reasons.length ? g.reasons.join('; ') : '–'}</td></tr>
`,
)}</tbody>
</table>`;
}

function counts(g: GroupSummary): string {
  return Object.entries(g.counts)
    .filter(([, n]) => n > 0)
    .map(([t, n]) => `${t} ${n}`)
    .join(', ');
}

function recoveryText(s: GroupSummary['recoveries'][number]): string {
  const what = s.level ? `${s.type} ${s.level}` : s.type;
  if (s.n === 1) return `${what}: ${num(s.mean, 1)}${s.outside ? ' (outside limits)' : ''}`;
  return `${what}: mean ${num(s.mean, 1)}, ${num(s.min, 1)}–${num(s.max, 1)}, SD ${num(s.sd, 1)}, n ${s.n}${s.outside ? `, ${s.outside} outside limits` : ''}`;
}

function resultsTable(result: RecalcResult, rows: readonly number[]): Markup {
  if (rows.length === 0) return html`<p class="note">No rows.</p>`;
  return html`<table id="results-table">
<thead><tr><th class="num">Row</th><th>Sample</th><th>Analyte</th><th>Type</th><th class="num">Reported result</th><th>Flags</th><th>QC status</th></tr></thead>
<tbody>
${rows.map(
  (r) => html`<tr><td class="num">${result.raw.rowNumbers[r]}</td><td>${text(result, 'sample_id', r)}</td><td>${text(result, 'analyte', r)}</td><td>${result.table.sampleType[r] ?? ''}</td><td class="num">${result.qc.reported[r] ?? ''}</td><td class="mono">${result.rowFlags[r] ?? ''}</td><td>${result.qc.status[r] ?? ''}</td></tr>
`,
)}</tbody>
</table>`;
}

function flagsTable(result: RecalcResult, flags: readonly Flag[]): Markup {
  if (flags.length === 0) return html`<p class="note" id="no-flags">No flags in this batch.</p>`;
  return html`<table id="flags-table">
<thead><tr><th class="num">Row</th><th>Sample</th><th>Analyte</th><th>Type</th><th>Code</th><th>Reason</th><th class="num">Value</th><th class="num">Limit</th></tr></thead>
<tbody>
${flags.map(
  (f) => html`<tr><td class="num">${result.raw.rowNumbers[f.row]}</td><td>${text(result, 'sample_id', f.row)}</td><td>${text(result, 'analyte', f.row)}</td><td>${result.table.sampleType[f.row] ?? ''}</td><td class="mono">${f.code}</td><td>${f.message}</td><td class="num">${value(f.value)}</td><td class="num">${value(f.limit)}</td></tr>
`,
)}</tbody>
</table>`;
}

/** Longest axis label drawn whole; a longer one keeps its start and its end, where MS and MSD differ. */
export const AXIS_LABEL_MAX = 28;

/**
 * A chart's axis label for a sample id: whole up to AXIS_LABEL_MAX characters, else its first
 * 12 and last 15 around "…", so two controls never read the same (labels are never cut by the
 * chart itself). The chart's points carry the whole id in their description.
 */
export function axisLabel(id: string): string {
  const chars = [...id];
  return chars.length <= AXIS_LABEL_MAX ? id : `${chars.slice(0, 12).join('')}…${chars.slice(-15).join('')}`;
}

async function recoverySection(result: RecalcResult, rows: readonly number[], analyte: string): Promise<Markup> {
  const recovery = result.computed.get('spike_recovery_pct');
  const points: RecoveryPoint[] = [];
  const labels = new Set<string>();
  for (const r of rows) {
    if (text(result, 'analyte', r) !== analyte || result.qc.status[r] === '' || !recovery || !Number.isFinite(recovery[r]!)) continue;
    const sampleId = text(result, 'sample_id', r);
    const rowNumber = result.raw.rowNumbers[r]!;
    let label = axisLabel(sampleId || `row ${rowNumber}`);
    if (labels.has(label)) label = `${label} (row ${rowNumber})`;
    labels.add(label);
    const lim = result.qc.limits[r]?.recovery;
    points.push({
      label,
      sampleId,
      sampleType: result.table.sampleType[r] ?? '',
      rowNumber,
      value: recovery[r]!,
      low: lim ? lim[0] : NaN,
      high: lim ? lim[1] : NaN,
    });
  }
  if (points.length === 0) return html`<h3>${analyte}</h3><p class="note">No control recoveries for ${analyte} in this batch.</p>`;
  const svg = await drawChart(recoveryChartSpec(points, { analyte }));
  const withLimits = points.filter((p) => Number.isFinite(p.low)).length;
  const outside = points.filter((p) => p.value < p.low || p.value > p.high).length;
  return html`<h3>${analyte}</h3>
<figure class="chart" data-chart="recovery" data-analyte="${analyte}" data-points="${points.length}" data-limits="${withLimits}" data-layer="${RECOVERY_LAYERS.points}">
${trusted(svg)}
<figcaption>${points.length} control recover${points.length === 1 ? 'y' : 'ies'} of ${analyte}; ${outside} outside ${outside === 1 ? 'its limits' : 'their limits'}.</figcaption>
</figure>`;
}

async function historySection(result: RecalcResult, batch: string, history: readonly TrendSeries[], analyte: string): Promise<Markup> {
  const series = history.filter((s) => s.analyte === analyte);
  if (series.length === 0) return html`<h3>${analyte}</h3><p class="note">No recoveries of ${analyte} in the QC history.</p>`;
  const parts = await Promise.all(series.map(async (s) => {
    const isCurrent = (i: number) => s.points[i]!.worklistSha256 === result.worklist.sha256 && s.points[i]!.batchId === batch;
    const svg = await drawChart(controlChartSpec(s, { isCurrent }));
    const l = s.limits;
    const caption = l.sufficient
      ? `n ${l.n}, mean ${num(l.mean, 2)} %, SD ${num(l.sd, 2)} %; warning limits ${num(l.warningLow, 1)}–${num(l.warningHigh, 1)} %, control limits ${num(l.controlLow, 1)}–${num(l.controlHigh, 1)} %; ${s.violations.length} rule violation${s.violations.length === 1 ? '' : 's'}.`
      : `n ${l.n}${Number.isFinite(l.mean) ? `, mean ${num(l.mean, 2)} %` : ''}${Number.isFinite(l.sd) ? `, SD ${num(l.sd, 2)} %` : ''}; no in-house limits yet: ${MIN_POINTS} points needed, so no rule is judged.`;
    const marked = new Set(s.violations.map((v) => v.index)).size;
    return html`<h3>${analyte}, ${s.sampleType}${s.level ? `, level ${s.level}` : ''}</h3>
<figure class="chart" data-chart="control" data-analyte="${analyte}" data-sample-type="${s.sampleType}" data-qc-level="${s.level}" data-points="${s.points.length}" data-violations="${marked}" data-layer="${CONTROL_LAYERS.points}">
${trusted(svg)}
<figcaption>${caption}</figcaption>
</figure>
${s.violations.length ? violationsTable(s, isCurrent) : ''}`;
  }));
  return html`${parts}`;
}

function violationsTable(s: TrendSeries, isCurrent: (i: number) => boolean): Markup {
  return html`<table class="violations">
<thead><tr><th>Rule</th><th>Kind</th><th class="num">Run</th><th>Batch</th><th>Sample</th><th>Level</th><th>Worklist</th><th class="num">Point</th><th class="num">Recovery (%)</th></tr></thead>
<tbody>
${s.violations.map((v) => {
  const p = s.points[v.index]!;
  return html`<tr class="${isCurrent(v.index) ? 'current' : ''}"><td class="mono">${v.rule}</td><td class="${v.severity === 'reject' ? 'fail' : ''}">${v.severity === 'reject' ? 'rejection' : 'warning'}</td><td class="num">${p.runId}</td><td>${p.batchId}</td><td>${p.sampleId}</td><td>${s.level}</td><td>${p.worklistName}</td><td class="num">${v.index + 1}</td><td class="num">${num(v.value, 1)}</td></tr>
`;
})}</tbody>
</table>`;
}

function num(x: number, digits: number): string {
  return Number.isFinite(x) ? x.toFixed(digits) : '–';
}

function value(v: number | string | undefined): string {
  if (v === undefined) return '';
  if (typeof v === 'number') return Number.isFinite(v) ? significant(v, 4) : '–';
  return v;
}
