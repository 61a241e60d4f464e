/**
 * Where the chart-drawing code is, for draw.ts: the worker's script, the module
 * to draw with on this thread when no worker runs, and a worker already started.
 *
 * scripts/bundle-cli.mjs puts another version of this module into the command
 * line's bundle: there the worker is dist/chart-worker.js, which runs the chart
 * bundle (dist/chart-bundle.js) through its code cache; the in-thread copy is
 * that same bundle, so vega is not part of the command line's bundle; and the
 * entry (scripts/cli-entry.mjs) may have started the worker already.
 */
import type { ChartModule, EarlyChartWorker } from './chart-protocol.js';

export const chartWorkerUrl: URL = new URL('./chart-worker.js', import.meta.url);

export function loadChartModule(): Promise<ChartModule> {
  return import('./chart-worker.js');
}

/** The worker the entry started, taken once; only the command line's entry starts one. */
export function takeEarlyChartWorker(): EarlyChartWorker | undefined {
  return undefined;
}
