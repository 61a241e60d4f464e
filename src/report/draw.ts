/**
 * Drawing the report's charts (svg.ts), on this thread. The chart code, vega
 * and vega-lite are loaded when the first chart is drawn (chart-code.ts), so
 * commands and runs without a report do not pay for them.
 *
 * The charts were once drawn on a worker thread started before the command
 * line loaded, to hide loading vega behind the rest of the run. Once charts of
 * one shape shared a compiled view and the bundles were split, the worker no
 * longer paid for its second thread, its second bundle and its second heap on
 * a small run (docs/performance.md has the numbers), so it went.
 */
import type { TopLevelSpec } from 'vega-lite';
import { loadChartModule } from './chart-code.js';

/** A chart's SVG (no xmlns: it is inlined into HTML). */
export async function drawChart(spec: TopLevelSpec): Promise<string> {
  return (await loadChartModule()).renderSvg(spec);
}
