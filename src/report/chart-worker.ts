/**
 * The chart worker: draws charts (svg.ts) on a thread of its own for draw.ts,
 * so that loading vega and drawing a report's charts happen while the main
 * thread reads the worklist and writes the other outputs.
 *
 * It answers each `{ id, spec }` with `{ id, svg }` or `{ id, error }` (charts
 * of one shape in the order asked, others as they are done; draw.ts matches
 * answers by id) and ends when told to close. Loaded as a plain module (the
 * in-thread way of drawing) it serves nothing: it only serves a worker started
 * with CHART_WORKER_DATA (chart-protocol.ts).
 */
import { isMainThread, parentPort, workerData, type MessagePort } from 'node:worker_threads';
import { recoveryChartSpec } from './charts.js';
import { CHART_WORKER_DATA, type ChartReply, type ChartRequest } from './chart-protocol.js';
import { renderSvg } from './svg.js';

export { renderSvg };

function serve(port: MessagePort): void {
  // Warm up while the main thread is still reading the worklist: the first chart
  // drawn costs ten times the next (vega's modules set up, code run for the first
  // time, the chart's shape compiled). This one is invented and thrown away, but
  // its compiled shape is kept: a batch's recovery chart of up to six controls has
  // the same shape and is drawn by the same view, which svg.ts empties before each
  // chart and its tests show to draw exactly what a fresh compile draws.
  const warm = renderSvg(WARM_UP).catch(() => undefined);
  port.on('message', (request: ChartRequest) => {
    if ('close' in request) {
      port.close();
      return;
    }
    warm.then(() => renderSvg(request.spec)).then(
      (svg) => port.postMessage({ id: request.id, svg } satisfies ChartReply),
      (err: unknown) => port.postMessage({ id: request.id, error: (err as Error)?.message ?? String(err) } satisfies ChartReply),
    );
  });
}

/** An invented batch's recoveries: two controls, one inside its limits, one above them (the shape of up to six). */
const WARM_UP = recoveryChartSpec(
  [
    { label: 'A', sampleId: 'A', sampleType: 'lcs', rowNumber: 2, value: 96, low: 70, high: 130 },
    { label: 'B', sampleId: 'B', sampleType: 'ms', rowNumber: 3, value: 141, low: 60, high: 140 },
  ],
  { analyte: 'warm-up' },
);

// Last, once everything above is defined.
if (!isMainThread && parentPort && workerData === CHART_WORKER_DATA) serve(parentPort);
