#!/usr/bin/env node
// The command line's entry, copied to dist/cli.js by scripts/bundle-cli.mjs:
// it runs the bundle dist/cli-bundle.js (the whole command line but the chart
// drawing, in one file) through V8's code cache (see bundle-loader.mjs).
import { Worker } from 'node:worker_threads';
import { runBundle } from './bundle-loader.cjs';

// Node warns about `Buffer()` (DEP0005) only when the caller is outside
// node_modules. Bundled dependency code is (exceljs's zip writer calls
// `new Buffer`), so this entry silences DEP0005 as Node does for node_modules.
// phasebook's own code does not call `Buffer()`.
const emitWarning = process.emitWarning;
process.emitWarning = function (warning, ...rest) {
  if (rest[1] === 'DEP0005' || (rest[0] && typeof rest[0] === 'object' && rest[0].code === 'DEP0005')) return;
  return emitWarning.call(this, warning, ...rest);
};

// A recalc that writes the report has its charts drawn on a worker thread
// (src/report/draw.ts). Started here, before the bundle loads, the worker is
// ready when the first chart is asked for. The command line takes it over, or
// ends it if its own reading of the arguments says no report is written; this
// reading may be wrong either way and costs only time.
const dist = new URL('./', import.meta.url).href;
runBundle(dist, 'cli-bundle', { chartWorker: writesReport(process.argv.slice(2)) ? startChartWorker() : undefined });

/** Whether the arguments ask `recalc` for the report (the default outputs include it). */
function writesReport(args) {
  if (args[0] !== 'recalc') return false;
  let outputs = 'html';
  for (let i = 1; i < args.length && args[i] !== '--'; i++) {
    if (args[i] === '--outputs') outputs = args[i + 1] ?? '';
    else if (args[i].startsWith('--outputs=')) outputs = args[i].slice('--outputs='.length);
  }
  return outputs.split(',').some((kind) => kind.trim() === 'html');
}

/** The chart worker, as src/report/chart-protocol.ts's EarlyChartWorker; its workerData is CHART_WORKER_DATA there. */
function startChartWorker() {
  let thread;
  try {
    thread = new Worker(new URL('./chart-worker.js', dist), { workerData: 'phasebook-chart-worker' });
  } catch {
    return undefined;
  }
  const early = { thread, exited: false };
  thread.unref();
  thread.on('error', () => undefined); // seen by the command line as the exit that follows
  thread.on('exit', () => (early.exited = true));
  return early;
}
