/**
 * Drawing the report's charts, on a worker thread when the command line has
 * started one (prepareChartWorker), else on this thread. Either way the chart is
 * drawn by the same code (svg.ts) and the SVG is the same, byte for byte.
 *
 * Why a worker: a small run's report is mostly fixed cost (loading vega and
 * vega-lite, compiling the first chart). The command line's entry starts the
 * worker before it loads the rest of the command line, when the arguments ask
 * for a report (scripts/cli-entry.mjs), so that cost falls on the second core
 * while the main thread loads, reads the method and the worklist and writes the
 * CSV and the workbook.
 *
 * A worker that cannot start, or stops, costs nothing but time: its charts are
 * drawn again on this thread.
 */
import { Worker } from 'node:worker_threads';
import type { TopLevelSpec } from 'vega-lite';
import { chartWorkerUrl, loadChartModule, takeEarlyChartWorker } from './chart-code.js';
import { CHART_WORKER_DATA, type ChartReply, type ChartRequest } from './chart-protocol.js';

/** The worker and the charts it has been asked for and not yet answered. */
interface ChartWorker {
  thread: Worker;
  pending: Map<number, { resolve: (svg: string) => void; reject: (err: Error) => void }>;
  nextId: number;
  /** Set once the worker has failed or exited: nothing more is sent to it. */
  gone: boolean;
}

let worker: ChartWorker | undefined;

/** Thrown to a drawing whose worker stopped before answering; it is drawn on this thread instead. */
class WorkerGone extends Error {}

/**
 * Before a run: when it will draw charts, start the chart worker (once), or take
 * the one the entry started; when it will not, end the entry's. The worker does
 * not keep the process alive while it has nothing to draw. Without a worker,
 * charts are drawn on this thread.
 */
export function prepareChartWorker(willDraw: boolean): void {
  const early = takeEarlyChartWorker();
  if (!willDraw) {
    void early?.thread.terminate();
    return;
  }
  if (worker !== undefined) {
    void early?.thread.terminate(); // one is running already
    return;
  }
  let thread: Worker;
  if (early !== undefined) {
    if (early.exited) return; // it failed to start: draw here
    thread = early.thread;
  } else {
    try {
      thread = new Worker(chartWorkerUrl, { workerData: CHART_WORKER_DATA });
    } catch {
      return; // e.g. no thread could be made: draw here
    }
  }
  const w: ChartWorker = { thread, pending: new Map(), nextId: 0, gone: false };
  worker = w;
  thread.unref();
  const fail = () => {
    if (w.gone) return;
    w.gone = true;
    for (const p of w.pending.values()) p.reject(new WorkerGone('the chart worker stopped'));
    w.pending.clear();
  };
  thread.on('message', (reply: ChartReply) => {
    const p = w.pending.get(reply.id);
    if (p === undefined) return;
    w.pending.delete(reply.id);
    if (w.pending.size === 0) thread.unref();
    if ('svg' in reply) p.resolve(reply.svg);
    else p.reject(new Error(reply.error));
  });
  thread.on('error', fail);
  thread.on('messageerror', fail);
  thread.on('exit', fail);
}

/**
 * End the chart worker at the end of a run. One that has drawn is let end once
 * it has answered everything asked of it, and the process waits for it (a worker
 * ending cleanly may still write its code cache, see scripts/bundle-loader.mjs);
 * one that was never asked for a chart (a run stopped before its outputs) is
 * ended at once. Charts drawn after this are drawn on this thread.
 */
export function stopChartWorker(): void {
  const w = worker;
  worker = undefined;
  if (w === undefined || w.gone) return;
  if (w.nextId === 0) {
    void w.thread.terminate();
    return;
  }
  w.thread.postMessage({ close: true } satisfies ChartRequest);
  w.thread.ref();
}

/** Whether charts are drawn on the worker now (for tests and diagnostics). */
export function chartWorkerRunning(): boolean {
  return worker !== undefined && !worker.gone;
}

/** A chart's SVG (no xmlns: it is inlined into HTML). */
export async function drawChart(spec: TopLevelSpec): Promise<string> {
  const w = worker;
  if (w !== undefined && !w.gone) {
    try {
      return await new Promise<string>((resolve, reject) => {
        const id = w.nextId++;
        w.pending.set(id, { resolve, reject });
        if (w.pending.size === 1) w.thread.ref();
        w.thread.postMessage({ id, spec } satisfies ChartRequest);
      });
    } catch (err) {
      if (!(err instanceof WorkerGone)) throw err;
    }
  }
  return (await loadChartModule()).renderSvg(spec);
}
