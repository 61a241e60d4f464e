// The chart worker's entry, copied to dist/chart-worker.js by scripts/bundle-cli.mjs:
// src/report/draw.ts starts it as a worker thread, and it runs the chart bundle
// dist/chart-bundle.js (src/report/chart-worker.ts with vega and vega-lite)
// through V8's code cache (see bundle-loader.mjs).
import { runBundle } from './bundle-loader.js';

runBundle(new URL('./', import.meta.url).href, 'chart-bundle');
