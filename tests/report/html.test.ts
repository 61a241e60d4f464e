import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TrendSeries } from '../../src/history/trends.js';
import type { RecalcResult } from '../../src/pipeline.js';
import { escapeHtml, html, trusted } from '../../src/report/markup.js';
import { AXIS_LABEL_MAX, axisLabel, htmlReportJobs, htmlReportPaths, renderReport, reportBatches } from '../../src/report/html.js';
import { commitAll } from '../../src/write/atomic.js';
import { EVIL_ANALYTE, EVIL_BATCH, EVIL_SAMPLE, REPORT_RUN, reportScenario } from './fixtures.js';

const RUN = REPORT_RUN;

let dir: string;
/** Batch B22 (LCS 113 %, LCSD 140 % → REC_HIGH, MS) and a batch with hostile names. */
let current: RecalcResult;
let history: TrendSeries[];
let reportB22: string;

/** Count the SVG items (paths or lines) inside the group of one named layer. */
function marks(svg: string, layer: string, tag = 'path'): number {
  const open = svg.indexOf(` ${layer}_marks"`);
  if (open < 0) return 0;
  const end = svg.indexOf('</g>', open);
  return svg.slice(open, end).split(`<${tag} `).length - 1;
}

/** The figure of one chart: its opening tag and its SVG. */
function figure(doc: string, chart: string, analyte: string, sampleType?: string): string {
  const attr = `data-chart="${chart}" data-analyte="${escapeHtml(analyte)}"${sampleType ? ` data-sample-type="${sampleType}"` : ''}`;
  const start = doc.indexOf(attr);
  expect(start, `figure ${attr}`).toBeGreaterThan(0);
  return doc.slice(start, doc.indexOf('</figure>', start));
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'phasebook-report-'));
  ({ current, history } = await reportScenario(dir));
  reportB22 = await renderReport(current, { batch: 'B22', history, run: RUN });
}, 120_000);

afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('markup', () => {
  it.each([
    ['<script>', '&lt;script&gt;'],
    ['a & b', 'a &amp; b'],
    ['"quoted" \'single\'', '&quot;quoted&quot; &#39;single&#39;'],
    ['plain 98.5 %', 'plain 98.5 %'],
  ])('escapes %j', (input, expected) => {
    expect(escapeHtml(input)).toBe(expected);
    expect(html`<td title="${input}">${input}</td>`.text).toBe(`<td title="${expected}">${expected}</td>`);
  });

  it('passes our own markup through, and escapes each item of an array', () => {
    expect(html`<p>${trusted('<b>x</b>')}${['<', html`<i>y</i>`]}${null}${undefined}${3}</p>`.text).toBe('<p><b>x</b>&lt;<i>y</i>3</p>');
  });
});

describe('renderReport', () => {
  it('is one self-contained document: inline style and SVG, no script, no URL, a policy that loads nothing', () => {
    expect(reportB22.startsWith('<!doctype html>')).toBe(true);
    expect(reportB22).toContain(`<meta http-equiv="Content-Security-Policy" content="default-src &#39;none&#39;; style-src &#39;unsafe-inline&#39;; img-src data:; base-uri &#39;none&#39;; form-action &#39;none&#39;">`);
    expect(reportB22).toMatch(/<style>[\s\S]+<\/style>/);
    for (const banned of ['<script', '<link', '<iframe', '<img', '@import', 'url(', 'http:', 'https:', 'src=', 'href=']) {
      expect(reportB22, banned).not.toContain(banned);
    }
    expect(reportB22.match(/<svg /g)?.length).toBe(4); // one recovery chart, control charts for lcs, lcsd and ms
  });

  it('gives the verdict and its reasons for the batch', () => {
    expect(reportB22).toContain('<title>Batch B22: FAIL (phasebook report)</title>');
    expect(reportB22).toContain('<span class="verdict fail" id="verdict">FAIL</span>');
    const reasons = current.groups.find((g) => g.batch === 'B22')!.reasons;
    expect(reasons.join('; ')).toContain('REC_HIGH');
    expect(reportB22).toContain(`<ul class="reasons"><li><strong>Atrazine</strong>: ${escapeHtml(reasons.join('; '))}</li></ul>`);
  });

  it('lists the summary and the flags of this batch only', () => {
    const summary = reportB22.slice(reportB22.indexOf('id="summary-table"'), reportB22.indexOf('</table>', reportB22.indexOf('id="summary-table"')));
    expect(summary.match(/<tr class="(pass|fail)">/g)).toEqual(['<tr class="fail">']);
    expect(summary).toContain('<td>Atrazine</td><td class="status">FAIL</td><td>sample 1, blank 1, lcs 1, lcsd 1, ms 1</td>');
    const flags = reportB22.slice(reportB22.indexOf('id="flags-table"'), reportB22.indexOf('</table>', reportB22.indexOf('id="flags-table"')));
    // LCSD 140 % against the generic 70–130 % (DESIGN.md §5), row 5 of the worklist (header = row 1).
    expect(flags).toContain('<td class="num">5</td><td>B22-LCSD</td><td>Atrazine</td><td>lcsd</td><td class="mono">REC_HIGH</td>');
    const message = current.flags.find((f) => f.code === 'REC_HIGH')!.message;
    expect(flags).toContain(`<td>${escapeHtml(message)}</td><td class="num">140</td><td class="num">130</td>`);
    expect(flags).not.toContain('X-S1');
  });

  it('charts every control recovery of the batch against its limits', () => {
    const fig = figure(reportB22, 'recovery', 'Atrazine');
    // LCS 113, LCSD 140, MS 90: three points, each with a limit bar.
    expect(fig).toContain('data-points="3" data-limits="3"');
    expect(marks(fig, 'recoveries')).toBe(3);
    expect(marks(fig, 'limits', 'line')).toBe(3);
    expect(fig).toContain('aria-label="B22-LCSD (lcsd, row 5): recovery 140.0 %, limits 70–130 %"');
    expect(fig).toContain('3 control recoveries of Atrazine; 1 outside its limits.');
  });

  it('draws a control chart with mean, ±2s and ±3s and the rule violations marked', () => {
    const fig = figure(reportB22, 'control', 'Atrazine', 'lcs');
    // 20 REFERENCE_LCS points, then 112 (B21) and 113 (B22): the series of trends.test.ts.
    expect(fig).toContain('data-points="22" data-violations="2"');
    expect(marks(fig, 'points')).toBe(22);
    expect(marks(fig, 'violations')).toBe(2);
    expect(marks(fig, 'limit_lines', 'line')).toBe(5);
    // mean 99.68, s 5.541 (Python statistics over the 22 values) → ±2s 88.6–110.8, ±3s 83.1–116.3.
    expect(fig).toContain('n 22, mean 99.68 %, SD 5.54 %; warning limits 88.6–110.8 %, control limits 83.1–116.3 %; 3 rule violations.');
    const table = reportB22.slice(reportB22.indexOf('<table class="violations">'));
    expect(table).toContain('<tr class=""><td class="mono">1-2s</td><td class="">warning</td><td class="num">21</td><td>B21</td><td>B21-LCS</td>');
    expect(table).toContain('<tr class="current"><td class="mono">2-2s</td><td class="fail">rejection</td><td class="num">22</td><td>B22</td><td>B22-LCS</td><td></td><td>current.csv</td><td class="num">22</td><td class="num">113.0</td></tr>');
  });

  it('says when a series has too few points for limits, and draws the mean only', () => {
    const fig = figure(reportB22, 'control', 'Atrazine', 'lcsd');
    expect(fig).toContain('data-points="1" data-violations="0"');
    expect(marks(fig, 'limit_lines', 'line')).toBe(1);
    expect(fig).toContain('n 1, mean 140.00 %; no in-house limits yet: 20 points needed, so no rule is judged.');
  });

  it('leaves out the control charts without a history', async () => {
    const doc = await renderReport(current, { batch: 'B22', run: RUN });
    expect(doc).not.toContain('data-chart="control"');
    expect(doc).not.toContain('id="history"');
    expect(doc).toContain('data-chart="recovery"');
  });

  it('escapes worklist text everywhere: tables, attributes, chart labels', async () => {
    const doc = await renderReport(current, { batch: EVIL_BATCH, history, run: RUN });
    for (const raw of [EVIL_SAMPLE, EVIL_ANALYTE, EVIL_BATCH, '<script', '<img', '<b>']) expect(doc).not.toContain(raw);
    expect(doc).toContain(`<h1>Batch ${escapeHtml(EVIL_BATCH)}</h1>`);
    expect(doc).toContain(`data-analyte="${escapeHtml(EVIL_ANALYTE)}"`);
    // Vega's SVG renderer escapes the axis label text it draws.
    expect(doc).toContain('aria-label="&lt;script&gt;alert(1)&lt;/script&gt; (lcs, row 7): recovery 99.0 %');
    expect(doc).toMatch(/<text [^>]*>&lt;script&gt;alert\(/); // the axis label, shortened to fit
    expect(doc).toContain('<span class="verdict pass" id="verdict">PASS</span>');
  });
});

describe('report files', () => {
  it('one file per batch, names made safe and distinct', async () => {
    expect(reportBatches(current)).toEqual(['B22', EVIL_BATCH]);
    expect(htmlReportPaths(current, { outDir: 'out', stem: 'current' })).toEqual([
      { batch: 'B22', path: join('out', 'current.B22.report.html') },
      { batch: EVIL_BATCH, path: join('out', 'current.B-img-src-x-onerror-alert-2.report.html') },
    ]);
  });

  it.each<[string, string[], string[]]>([
    ['no batch ids', [''], ['w.report.html']],
    ['ids that reduce to the same name', ['A/B', 'a b', 'A:B'], ['w.A-B.report.html', 'w.a-b-2.report.html', 'w.A-B-3.report.html']],
    ['an id with nothing usable', ['***'], ['w.batch.report.html']],
  ])('%s', (_name, batches, names) => {
    const fake = {
      rowsOut: batches.length,
      table: { texts: new Map([['batch_id', batches]]) },
      groups: [],
      flags: [],
    } as unknown as RecalcResult;
    expect(htmlReportPaths(fake, { outDir: '', stem: 'w' }).map((p) => p.path)).toEqual(names);
  });

  it('writes through the all-or-nothing commit, the same text renderReport gives', async () => {
    const outDir = join(dir, 'out');
    const { mkdirSync } = await import('node:fs');
    mkdirSync(outDir);
    const jobs = htmlReportJobs(current, { outDir, stem: 'current', history, run: RUN });
    expect(jobs.map((j) => j.target)).toEqual(htmlReportPaths(current, { outDir, stem: 'current' }).map((p) => p.path));
    await commitAll(jobs);
    expect(readFileSync(jobs[0]!.target, 'utf8')).toBe(reportB22);
    // A second commit without force stops before writing anything.
    await expect(commitAll(htmlReportJobs(current, { outDir, stem: 'current', history, run: RUN }))).rejects.toThrow('2 outputs already exist');
  });
});

describe('axis labels (issue 15: two controls never read the same)', () => {
  it.each([
    ['KB-03 Footbridge MS', 'KB-03 Footbridge MS'],
    ['KB-03 Footbridge MSD', 'KB-03 Footbridge MSD'],
    ['Millbrook-intake-2026-11-30-weir-MS', 'Millbrook-in…6-11-30-weir-MS'],
    ['Millbrook-intake-2026-11-30-weir-MSD', 'Millbrook-in…-11-30-weir-MSD'],
  ])('%s → %s', (id, label) => {
    expect(axisLabel(id)).toBe(label);
    expect([...axisLabel(id)].length).toBeLessThanOrEqual(AXIS_LABEL_MAX);
  });
});
