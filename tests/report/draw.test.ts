/**
 * drawChart (draw.ts) loads the chart code when first asked (chart-code.ts) and
 * draws on this thread: charts asked for all at once, several sharing one
 * compiled view (svg.ts), must each be what drawing it alone gives, byte for
 * byte, and a drawing error must reach the caller without stopping the next.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TopLevelSpec } from 'vega-lite';
import type { TrendSeries } from '../../src/history/trends.js';
import { controlChartSpec, recoveryChartSpec } from '../../src/report/charts.js';
import { drawChart } from '../../src/report/draw.js';
import { renderSvg } from '../../src/report/svg.js';
import { inventedRecoveries, reportScenario } from './fixtures.js';

let dir: string;
let history: TrendSeries[];

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'phasebook-draw-'));
  ({ history } = await reportScenario(dir));
}, 120_000);

afterAll(() => {
  rmSync(dir, { recursive: true, force: true });
});

describe('drawing charts', () => {
  it('draws recovery and control charts asked for all at once, each exactly as drawing it alone does', async () => {
    const specs: TopLevelSpec[] = [
      // Charts of one shape (up to six controls) share a view; then wider charts.
      recoveryChartSpec(inventedRecoveries(3, 0), { analyte: 'Atrazine' }),
      recoveryChartSpec(inventedRecoveries(6, 4), { analyte: 'Simazine' }),
      recoveryChartSpec(inventedRecoveries(9, 2), { analyte: 'Atrazine' }),
      recoveryChartSpec(inventedRecoveries(25, 7), { analyte: 'Atrazine' }),
      ...history.map((s) => controlChartSpec(s, { isCurrent: (i) => i === s.points.length - 1 })),
    ];
    expect(history.length).toBeGreaterThan(1);
    const drawn = await Promise.all(specs.map((spec) => drawChart(spec)));
    for (let i = 0; i < specs.length; i++) {
      expect(drawn[i], `chart ${i}`).toBe(await renderSvg(specs[i]!, { reuse: false }));
    }
    expect(new Set(drawn).size).toBe(specs.length);
  });

  it('passes on the error of a chart that cannot be drawn, with the message drawing it here gives', async () => {
    // A field type vega-lite does not know: compiling it throws.
    const bad = { data: { values: [{ a: 1 }] }, mark: 'point', encoding: { x: { field: 'a', type: 'no-such-type' } } } as unknown as TopLevelSpec;
    const here = await renderSvg(bad, { reuse: false }).then(
      () => 'drawn',
      (err: Error) => err.message,
    );
    expect(here).not.toBe('drawn');
    await expect(drawChart(bad)).rejects.toThrow(here);
    // Drawing goes on after an error.
    const good = recoveryChartSpec(inventedRecoveries(4, 1), { analyte: 'Atrazine' });
    expect(await drawChart(good)).toBe(await renderSvg(good, { reuse: false }));
  });
});
