/**
 * Drawing a chart: a Vega-Lite specification (charts.ts) compiled to Vega and
 * rendered to SVG in Node (renderer 'none', no browser, no canvas). This is the
 * only module that loads vega and vega-lite; they load on first use, so commands
 * without a report do not pay for them. draw.ts decides on which thread it runs.
 */
import type { TopLevelSpec } from 'vega-lite';

type VegaModule = typeof import('vega');
type VegaLiteModule = typeof import('vega-lite');
let libraries: Promise<[VegaModule, VegaLiteModule]> | undefined;

/**
 * A chart's specification without its data: every inline `data: {values}` becomes a
 * named dataset (`data_values_0`, …) whose rows are handed to the view instead. Charts
 * of the same shape (the same analytes and counts in every batch of a worklist) then
 * share one compiled and parsed Vega specification.
 */
function withoutValues(spec: TopLevelSpec): { shape: unknown; datasets: Map<string, unknown[]> } {
  const datasets = new Map<string, unknown[]>();
  const walk = (x: unknown): unknown => {
    if (Array.isArray(x)) return x.map(walk);
    if (x === null || typeof x !== 'object') return x;
    const out: Record<string, unknown> = {};
    for (const [k, v] of Object.entries(x)) {
      const values = k === 'data' && v !== null && typeof v === 'object' ? (v as { values?: unknown }).values : undefined;
      if (Array.isArray(values)) {
        const name = `data_values_${datasets.size}`;
        datasets.set(name, values);
        out[k] = { name };
      } else out[k] = walk(v);
    }
    return out;
  };
  return { shape: walk(spec), datasets };
}

type View = InstanceType<VegaModule['View']>;

/**
 * One view per chart shape, reused: each chart sets its rows, reruns the dataflow
 * and renders. Renders of one view are queued one after another. Bounded so a
 * long run cannot grow it without end.
 */
const views = new Map<string, { view: View; queue: Promise<unknown> }>();
const MAX_VIEWS = 64;

/**
 * Compile a Vega-Lite spec and render it to an SVG string (no xmlns: it is inlined
 * into HTML). Specs of the same shape are compiled once and drawn by one view
 * (`withoutValues`); tests check that the SVG is the same as compiling each spec
 * with its data inline (`reuse: false`), also over random recoveries and limits.
 */
export async function renderSvg(spec: TopLevelSpec, options: { reuse?: boolean } = {}): Promise<string> {
  libraries ??= Promise.all([import('vega'), import('vega-lite')]);
  const [vega, vl] = await libraries;
  if (options.reuse === false) {
    const view = new vega.View(vega.parse(vl.compile(spec).spec), { renderer: 'none' });
    try {
      return svgText(await view.toSVG());
    } finally {
      view.finalize();
    }
  }
  // The chart's description is the view's, not the drawing's (vega puts it on a page's
  // container element, not in the SVG): charts differing only in it share one view.
  const { description, ...drawing } = spec as TopLevelSpec & { description?: string };
  const { shape, datasets } = withoutValues(drawing as TopLevelSpec);
  const key = JSON.stringify(shape);
  let entry = views.get(key);
  if (entry === undefined) {
    if (views.size >= MAX_VIEWS) {
      for (const old of views.values()) void old.queue.then(() => old.view.finalize());
      views.clear();
    }
    entry = { view: new vega.View(vega.parse(vl.compile(shape as TopLevelSpec).spec), { renderer: 'none' }), queue: Promise.resolve() };
    views.set(key, entry);
  }
  const { view } = entry;
  const drawn = entry.queue.then(async () => {
    // Empty the view first: items (axis ticks, grid lines) that outlive a data change
    // would keep their place, and the SVG would list them in another order than a
    // view drawing this chart alone does.
    for (const name of datasets.keys()) view.data(name, []);
    await view.runAsync();
    view.description(description ?? '');
    for (const [name, values] of datasets) view.data(name, values);
    // Lay the view out again for this chart's content (vega only does so on its own after a size change).
    view.resize();
    await view.runAsync();
    return svgText(await view.toSVG());
  });
  entry.queue = drawn.catch(() => undefined);
  return drawn;
}

/** Inline SVG in HTML needs no namespace declarations; dropping them keeps the file free of any URL. */
function svgText(svg: string): string {
  return svg.replace(/^<svg xmlns="[^"]*" xmlns:xlink="[^"]*"/, '<svg');
}
