/**
 * The report printed to PDF by headless Chromium (`page.pdf`, the browser's own print to PDF), with
 * the report's print styles (src/report/style.ts, `@media print`): a sensible number of A4 pages,
 * and no chart split across two of them.
 *
 * Which page a chart lands on is read from the PDF itself: the test puts a link at the top and one
 * at the bottom of every chart (in the browser, not in the report), and Chromium writes each link as
 * a link annotation on the page it falls on (ISO 32000-1 §12.5.6.5: a /Link annotation in the page's
 * /Annots, its target a /URI action). A chart is whole when both of its links are on one page.
 */
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { htmlReportJobs } from '../../src/report/html.js';
import { commitAll } from '../../src/write/atomic.js';
import { REPORT_RUN, reportScenario } from '../report/fixtures.js';
import { skipWithout } from '../helpers/tools.js';

const CHROMIUM = '/usr/bin/chromium';
const MARKER = 'https://marker.invalid/chart';

/** CSS pixels per millimetre (CSS Values 3: 1in = 96px = 25.4mm). */
const PX_PER_MM = 96 / 25.4;
/** The printed area of a page as the report's @page rule sets it: A4 (210 × 297 mm, ISO 216) less the margins. */
const CONTENT = { width: (210 - 2 * 12) * PX_PER_MM, height: (297 - 14 - 16) * PX_PER_MM };

/** The pages of a PDF in order, each with the URIs of its link annotations (a PDF without object streams, as Chromium writes it). */
function pdfPages(pdf: Buffer): string[][] {
  const text = pdf.toString('latin1');
  const objects = new Map<number, string>();
  for (const m of text.matchAll(/(?:^|[\r\n])(\d+) 0 obj\b([\s\S]*?)\bendobj/g)) objects.set(Number(m[1]), m[2]!);
  const refs = (s: string | undefined): number[] => [...(s ?? '').matchAll(/(\d+) 0 R/g)].map((m) => Number(m[1]));
  const root = [...objects.entries()].find(([, body]) => /\/Type\s*\/Pages\b/.test(body) && !/\/Parent\b/.test(body));
  if (!root) throw new Error('no page tree in the PDF');
  const pages: string[][] = [];
  const walk = (id: number): void => {
    const body = objects.get(id) ?? '';
    if (/\/Type\s*\/Pages\b/.test(body)) {
      for (const kid of refs(/\/Kids\s*\[([^\]]*)\]/.exec(body)?.[1])) walk(kid);
      return;
    }
    const annots = refs(/\/Annots\s*\[([^\]]*)\]/.exec(body)?.[1]);
    pages.push(annots.map((a) => /\/URI\s*\(([^)]*)\)/.exec(objects.get(a) ?? '')?.[1]).filter((u): u is string => u !== undefined));
  };
  walk(root[0]);
  return pages;
}

/** Links at the top and the bottom of every chart, for the PDF to tell where each lands. */
async function markCharts(page: Page): Promise<number> {
  return page.evaluate((marker) => {
    const figures = [...document.querySelectorAll('figure.chart')];
    figures.forEach((f, i) => {
      const link = (end: string) => {
        const a = document.createElement('a');
        a.href = `${marker}/${i}/${end}`;
        a.textContent = '.';
        a.style.cssText = 'display:block;font-size:2px;line-height:2px;height:2px;';
        return a;
      };
      f.prepend(link('top'));
      f.append(link('bottom'));
    });
    return figures.length;
  }, MARKER);
}

/** Per chart, the pages (1-based) its top and bottom links are on. */
function chartPages(pages: readonly string[][], charts: number): Array<{ top: number; bottom: number }> {
  const pageOf = (uri: string) => pages.findIndex((links) => links.includes(uri)) + 1;
  return Array.from({ length: charts }, (_, i) => ({ top: pageOf(`${MARKER}/${i}/top`), bottom: pageOf(`${MARKER}/${i}/bottom`) }));
}

describe.skipIf(skipWithout('Chromium (/usr/bin/chromium)', existsSync(CHROMIUM)))('the HTML report printed to PDF', () => {
  let dir: string;
  let browser: Browser;
  let file: string;

  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'phasebook-print-'));
    const { current, history } = await reportScenario(dir);
    const jobs = htmlReportJobs(current, { outDir: dir, stem: 'current', history, run: REPORT_RUN });
    await commitAll(jobs);
    file = jobs[0]!.target; // batch B22: a recovery chart and three control charts
    browser = await chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    });
  }, 180_000);

  afterAll(async () => {
    await browser?.close();
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  /** The report opened at the printed width, with print styles, its charts marked. */
  async function openForPrint(): Promise<{ page: Page; charts: number }> {
    const page = await browser.newPage({ viewport: { width: Math.floor(CONTENT.width), height: 900 } });
    await page.goto(pathToFileURL(file).href, { waitUntil: 'load' });
    await page.emulateMedia({ media: 'print' });
    return { page, charts: await markCharts(page) };
  }

  it('prints on a sensible number of A4 pages, every chart whole on one page', async () => {
    const { page, charts } = await openForPrint();
    // The report laid out with its print styles but not yet cut into pages: how tall it is, and its forced breaks.
    const laidOut = await page.evaluate(() => ({
      height: document.documentElement.scrollHeight,
      forcedBreaks: [...document.querySelectorAll('section')].filter((s) => getComputedStyle(s).breakBefore === 'page').length,
    }));
    const pdf = await page.pdf({ preferCSSPageSize: true });
    await page.close();
    expect(pdf.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    // A4 portrait from the report's @page rule: 595 × 842 points (ISO 216, 1 pt = 1/72 in).
    expect(pdf.toString('latin1')).toMatch(/\/MediaBox \[0 0 59[45]\.\d* 84[12]\.\d*\]/);
    const pages = pdfPages(pdf);
    expect(charts).toBe(4);
    expect(laidOut.forcedBreaks).toBe(2); // the recoveries and the control charts each start a page
    // At least the pages the content fills; at most one more for each forced break and each chart moved whole to the next page.
    const least = Math.ceil(laidOut.height / CONTENT.height);
    expect(pages.length).toBeGreaterThanOrEqual(least);
    expect(pages.length).toBeLessThanOrEqual(least + laidOut.forcedBreaks + charts);
    const where = chartPages(pages, charts);
    for (const [i, p] of where.entries()) {
      expect(p.top, `chart ${i}: top found`).toBeGreaterThan(0);
      expect(p.bottom, `chart ${i}: on one page`).toBe(p.top);
    }
    // The recoveries start a page of their own, after the header, summary, results and flags.
    expect(where[0]!.top).toBeGreaterThan(1);
  });

  it.each([
    ['the report as written', '', 'whole'],
    ['with break-inside allowed again (the check itself can fail)', 'figure.chart { break-inside: auto !important; }', 'split'],
  ])('a chart that would straddle a page break: %s', async (_name, override, expected) => {
    const { page, charts } = await openForPrint();
    // A spacer before the first chart that puts the middle of the chart on the first page break of its section.
    await page.evaluate(
      ({ pageHeight, css }) => {
        const figure = document.querySelector('figure.chart')!;
        const section = figure.closest('section')!;
        const top = figure.getBoundingClientRect().top - section.getBoundingClientRect().top;
        const height = figure.getBoundingClientRect().height;
        const spacer = document.createElement('div');
        spacer.style.height = `${Math.max(0, pageHeight - top - height / 2)}px`;
        figure.before(spacer);
        const style = document.createElement('style');
        style.textContent = css;
        document.head.append(style);
      },
      { pageHeight: CONTENT.height, css: override },
    );
    const pdf = await page.pdf({ preferCSSPageSize: true });
    await page.close();
    const first = chartPages(pdfPages(pdf), charts)[0]!;
    expect(first.top).toBeGreaterThan(0);
    expect(first.bottom === first.top ? 'whole' : 'split').toBe(expected);
  });
});
