/**
 * The report in a real browser: headless Chromium from Debian (`chromium`, at
 * /usr/bin/chromium) driven by playwright-core. Skipped only when that browser is
 * absent on a developer's machine; CI installs it (.ci/run), and there a missing
 * browser fails the tests (helpers/tools.ts).
 */
import { existsSync, mkdirSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { htmlReportJobs } from '../../src/report/html.js';
import { commitAll } from '../../src/write/atomic.js';
import { EVIL_ANALYTE, EVIL_BATCH, EVIL_SAMPLE, REPORT_RUN, reportScenario } from '../report/fixtures.js';
import { skipWithout } from '../helpers/tools.js';

const CHROMIUM = '/usr/bin/chromium';
const ARTIFACTS = resolve('tests/artifacts');

interface ChartSeen {
  chart: string;
  analyte: string;
  sampleType: string | null;
  declaredPoints: number;
  declaredViolations: number | null;
  /** Marks the browser drew in the chart's point layer, with a visible box. */
  drawnPoints: number;
  drawnViolations: number;
  drawnLimitLines: number;
  width: number;
  height: number;
}

describe.skipIf(skipWithout('Chromium (/usr/bin/chromium)', existsSync(CHROMIUM)))('the HTML report in headless Chromium', () => {
  let dir: string;
  let browser: Browser;
  let files: string[];

  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'phasebook-browser-'));
    const { current, history } = await reportScenario(dir);
    const jobs = htmlReportJobs(current, { outDir: dir, stem: 'current', history, run: REPORT_RUN });
    await commitAll(jobs);
    files = jobs.map((j) => j.target);
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    });
    mkdirSync(ARTIFACTS, { recursive: true });
  }, 180_000);

  afterAll(async () => {
    await browser?.close();
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  /** Open one report, collect what the page did, read every chart, save a screenshot. */
  async function open(file: string, screenshot: string) {
    const page = await browser.newPage({ viewport: { width: 1200, height: 900 } });
    const requests: string[] = [];
    const dialogs: string[] = [];
    const errors: string[] = [];
    page.on('request', (r) => requests.push(r.url()));
    page.on('dialog', (d) => {
      dialogs.push(d.message());
      void d.dismiss();
    });
    page.on('console', (m) => {
      if (m.type() === 'error') errors.push(m.text());
    });
    page.on('pageerror', (e) => errors.push(e.message));
    const url = pathToFileURL(file).href;
    await page.goto(url, { waitUntil: 'load' });
    const charts = await page.$$eval('figure.chart', (figures) =>
      figures.map((f) => {
        const visible = (sel: string) =>
          [...f.querySelectorAll(sel)].filter((el) => {
            const box = el.getBoundingClientRect();
            return box.width > 0 && box.height > 0;
          }).length;
        const layer = f.getAttribute('data-layer')!;
        const svg = f.querySelector('svg')!.getBoundingClientRect();
        return {
          chart: f.getAttribute('data-chart')!,
          analyte: f.getAttribute('data-analyte')!,
          sampleType: f.getAttribute('data-sample-type'),
          declaredPoints: Number(f.getAttribute('data-points')),
          declaredViolations: f.hasAttribute('data-violations') ? Number(f.getAttribute('data-violations')) : null,
          drawnPoints: visible(`g.${layer}_marks > path`),
          drawnViolations: visible('g.violations_marks > path'),
          drawnLimitLines: f.querySelectorAll('g.limit_lines_marks > line').length,
          width: svg.width,
          height: svg.height,
        };
      }),
    );
    const verdict = await page.textContent('#verdict');
    const heading = await page.textContent('h1');
    const scripts = await page.$$eval('script, img, iframe, object, embed, link', (els) => els.length);
    mkdirSync(ARTIFACTS, { recursive: true });
    await page.screenshot({ path: join(ARTIFACTS, screenshot), fullPage: true });
    await page.close();
    return { url, requests, dialogs, errors, charts: charts as ChartSeen[], verdict, heading, scripts };
  }

  it('shows batch B22 with every chart drawn with its points, loading nothing else', async () => {
    const seen = await open(files[0]!, 'report-B22.png');
    expect(seen.requests).toEqual([seen.url]);
    expect(seen.errors).toEqual([]);
    expect(seen.dialogs).toEqual([]);
    expect(seen.verdict).toBe('FAIL');
    expect(seen.heading).toBe('Batch B22');
    expect(seen.charts.map((c) => [c.chart, c.sampleType, c.declaredPoints, c.drawnPoints, c.declaredViolations, c.drawnViolations, c.drawnLimitLines])).toEqual([
      // This batch: LCS, LCSD and MS recoveries against their limits.
      ['recovery', null, 3, 3, null, 0, 0],
      // The LCS series of the history plus this run: 22 points, two marked (B21 112 %, B22 113 %),
      // mean, ±2s and ±3s lines (see trends.test.ts for the numbers).
      ['control', 'lcs', 22, 22, 2, 2, 5],
      // One point each: no limits yet, the mean line only.
      ['control', 'lcsd', 1, 1, 0, 0, 1],
      ['control', 'ms', 1, 1, 0, 0, 1],
    ]);
    for (const c of seen.charts) {
      expect(c.width).toBeGreaterThan(200);
      expect(c.height).toBeGreaterThan(150);
    }
  });

  it('shows hostile worklist text as text: no script runs, no element is injected', async () => {
    const seen = await open(files[1]!, 'report-hostile-batch.png');
    expect(seen.dialogs).toEqual([]);
    expect(seen.errors).toEqual([]);
    expect(seen.requests).toEqual([seen.url]);
    expect(seen.scripts).toBe(0);
    expect(seen.heading).toBe(`Batch ${EVIL_BATCH}`);
    expect(seen.verdict).toBe('PASS');
    expect(seen.charts).toEqual([
      expect.objectContaining({ chart: 'recovery', analyte: EVIL_ANALYTE, declaredPoints: 1, drawnPoints: 1 }),
      expect.objectContaining({ chart: 'control', analyte: EVIL_ANALYTE, sampleType: 'lcs', declaredPoints: 1, drawnPoints: 1 }),
    ]);
    // The hostile sample id is in the page as text (the chart's point description).
    const page = await browser.newPage();
    await page.goto(pathToFileURL(files[1]!).href);
    const labels = await page.$$eval('g.recoveries_marks > path', (els) => els.map((e) => e.getAttribute('aria-label')));
    expect(labels[0]!.startsWith(`${EVIL_SAMPLE} (lcs, row 7)`)).toBe(true);
    await page.close();
  });
});
