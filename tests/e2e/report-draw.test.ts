/**
 * Charts drawn on the chart worker must be the charts drawn on this thread, byte
 * for byte, and a drawing error must reach the caller the same way. The worker
 * runs a built file, so this test uses dist/ (npm test builds it first): the
 * worker is dist/report/chart-worker.js, started by dist/report/draw.js.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TopLevelSpec } from 'vega-lite';
import type { TrendSeries } from '../../src/history/trends.js';
import { controlChartSpec, recoveryChartSpec } from '../../src/report/charts.js';
import { renderSvg } from '../../src/report/svg.js';
import { inventedRecoveries, reportScenario } from '../report/fixtures.js';

type Draw = typeof import('../../src/report/draw.js');
let draw: Draw;
let dir: string;
let history: TrendSeries[];

beforeAll(async () => {
  draw = (await import(join(import.meta.dirname, '../../dist/report/draw.js'))) as Draw;
  dir = mkdtempSync(join(tmpdir(), 'phasebook-draw-'));
  ({ history } = await reportScenario(dir));
}, 120_000);

afterAll(() => {
  draw?.stopChartWorker();
  rmSync(dir, { recursive: true, force: true });
});

describe('drawing charts on the chart worker', () => {
  it('draws recovery and control charts exactly as drawing them on this thread does, asked for all at once', async () => {
    draw.prepareChartWorker(true);
    const specs: TopLevelSpec[] = [
      // Up to six controls: the shape the worker warms up with; then wider charts.
      recoveryChartSpec(inventedRecoveries(3, 0), { analyte: 'Atrazine' }),
      recoveryChartSpec(inventedRecoveries(6, 4), { analyte: 'Simazine' }),
      recoveryChartSpec(inventedRecoveries(9, 2), { analyte: 'Atrazine' }),
      recoveryChartSpec(inventedRecoveries(25, 7), { analyte: 'Atrazine' }),
      ...history.map((s) => controlChartSpec(s, { isCurrent: (i) => i === s.points.length - 1 })),
    ];
    expect(history.length).toBeGreaterThan(1);
    const drawn = await Promise.all(specs.map((spec) => draw.drawChart(spec)));
    expect(draw.chartWorkerRunning()).toBe(true); // drawn there, not here after a failure
    for (let i = 0; i < specs.length; i++) {
      expect(drawn[i], `chart ${i}`).toBe(await renderSvg(specs[i]!, { reuse: false }));
    }
    expect(new Set(drawn).size).toBe(specs.length);
  });

  it('passes on the error of a chart that cannot be drawn, with the message drawing it here gives', async () => {
    draw.prepareChartWorker(true);
    // A field type vega-lite does not know: compiling it throws.
    const bad = { data: { values: [{ a: 1 }] }, mark: 'point', encoding: { x: { field: 'a', type: 'no-such-type' } } } as unknown as TopLevelSpec;
    const here = await renderSvg(bad, { reuse: false }).then(
      () => 'drawn',
      (err: Error) => err.message,
    );
    expect(here).not.toBe('drawn');
    await expect(draw.drawChart(bad)).rejects.toThrow(here);
    // The worker goes on drawing after an error.
    const good = recoveryChartSpec(inventedRecoveries(4, 1), { analyte: 'Atrazine' });
    expect(await draw.drawChart(good)).toBe(await renderSvg(good, { reuse: false }));
    expect(draw.chartWorkerRunning()).toBe(true);
  });

  it('draws on this thread after the worker is stopped', async () => {
    draw.stopChartWorker();
    expect(draw.chartWorkerRunning()).toBe(false);
    const spec = recoveryChartSpec(inventedRecoveries(5, 3), { analyte: 'Simazine' });
    expect(await draw.drawChart(spec)).toBe(await renderSvg(spec, { reuse: false }));
  });
});
