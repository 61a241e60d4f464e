/**
 * Charts of the same shape share one compiled Vega specification, with each chart's
 * rows handed to the view. The SVG must be exactly what compiling each spec with
 * its data inline gives (vega-lite's own compile is the reference).
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { TrendSeries } from '../../src/history/trends.js';
import { controlChartSpec, recoveryChartSpec, type RecoveryPoint } from '../../src/report/charts.js';
import { renderSvg } from '../../src/report/svg.js';
import { inventedRecoveries, reportScenario } from './fixtures.js';

let dir: string;
let history: TrendSeries[];

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'phasebook-charts-'));
  ({ history } = await reportScenario(dir));
}, 120_000);

afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Six invented controls shifted by `k`, with long labels from k 20 on. */
const points = (k: number): RecoveryPoint[] => inventedRecoveries(6, k, { longLabels: k >= 20 });

describe('renderSvg reusing a compiled chart shape', () => {
  it('draws recovery charts of one shape with different data and analytes exactly as compiling each one does, growing or shrinking', async () => {
    const svgs: string[] = [];
    // Charts of different analytes differ only in their description, and share a view.
    const charts = [
      [0, 'Atrazine'],
      [40, 'Simazine'],
      [5, 'Atrazine'],
      [0, '2,4-Dichlorophenol'],
    ] as const;
    for (const [k, analyte] of charts) {
      const spec = recoveryChartSpec(points(k), { analyte });
      const reused = await renderSvg(spec);
      expect(reused).toBe(await renderSvg(spec, { reuse: false }));
      svgs.push(reused);
    }
    expect(new Set(svgs).size).toBe(3); // the data did change the drawing
    expect(svgs[3]).toBe(svgs[0]);
  });

  it('draws 60 recovery charts of random recoveries and limits (some none) exactly as compiling each one does', async () => {
    // A 32-bit linear congruential generator (Numerical Recipes' constants; common practice), so a failure repeats.
    let seed = 20261202;
    const random = () => (seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0) / 2 ** 32;
    const mismatches: number[] = [];
    for (let i = 0; i < 60; i++) {
      const low = 50 + Math.round(random() * 30);
      const chart: RecoveryPoint[] = Array.from({ length: 4 }, (_, j) => ({
        label: `C${j + 1}`,
        sampleId: `S-${i}-${j}`,
        sampleType: j % 2 ? 'lcs' : 'ms',
        rowNumber: j + 2,
        value: 20 + random() * 160,
        low: random() < 0.2 ? Number.NaN : low,
        high: low + 40 + Math.round(random() * 30),
      }));
      const spec = recoveryChartSpec(chart, { analyte: i % 3 ? 'Atrazine' : 'Simazine' });
      if ((await renderSvg(spec)) !== (await renderSvg(spec, { reuse: false }))) mismatches.push(i);
    }
    expect(mismatches).toEqual([]);
  });

  it('draws every control chart of the report scenario exactly as compiling each one does', async () => {
    expect(history.length).toBeGreaterThan(1);
    for (const s of history) {
      for (const current of [() => false, (i: number) => i === s.points.length - 1]) {
        const spec = controlChartSpec(s, { isCurrent: current });
        expect(await renderSvg(spec), `${s.analyte} ${s.sampleType}`).toBe(await renderSvg(spec, { reuse: false }));
      }
    }
  });
});
