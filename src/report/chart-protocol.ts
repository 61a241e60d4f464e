/**
 * What draw.ts and the chart worker (chart-worker.ts) say to each other. A
 * module of its own so that the command line's bundle, which starts the worker,
 * holds none of the worker's code (vega).
 */
import type { Worker } from 'node:worker_threads';
import type { TopLevelSpec } from 'vega-lite';

/** The workerData that makes chart-worker.ts serve. */
export const CHART_WORKER_DATA = 'phasebook-chart-worker';

/** Draw `spec`, or (close) end once every chart asked for is answered. */
export type ChartRequest = { id: number; spec: TopLevelSpec } | { close: true };
/** A request's SVG, or the message of the error that drawing it threw. */
export type ChartReply = { id: number; svg: string } | { id: number; error: string };

/** The chart worker's module, loaded on the main thread to draw there. */
export interface ChartModule {
  renderSvg: (spec: TopLevelSpec) => Promise<string>;
}

/**
 * A chart worker the command line's entry started before loading the bundle
 * (scripts/cli-entry.mjs), with whether it has already stopped.
 */
export interface EarlyChartWorker {
  thread: Worker;
  exited: boolean;
}
