// The chart worker's entry, copied to dist/chart-worker.js by scripts/bundle-cli.mjs:
// src/report/draw.ts starts it as a worker thread, and it runs the chart bundle
// dist/chart-bundle.js (src/report/chart-worker.ts with vega and vega-lite)
// through V8's code cache (see bundle-loader.mjs).
import { setPriority } from 'node:os';
import { runBundle } from './bundle-loader.cjs';

// The charts are wanted only once the main thread has read, evaluated and written
// the CSV and the workbook, so this thread is background work: it lowers its own
// scheduling priority, so that when both cores are busy the main thread goes first
// (a 40-row run with every output, 15 alternating runs each: median 0.49 s at the
// same priority, 0.476 s lowered). Only on Linux, where the priority set for
// "this process" (0) is the calling thread's alone; elsewhere it is the whole process's.
if (process.platform === 'linux') {
  try {
    setPriority(0, 10);
  } catch {
    // not allowed here: draw at the same priority
  }
}

runBundle(new URL('./', import.meta.url).href, 'chart-bundle');
