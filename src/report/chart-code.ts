/**
 * Where the chart-drawing code is, for draw.ts: svg.ts, loaded the first time a
 * chart is drawn, so that a run without a report does not load vega.
 *
 * scripts/bundle-cli.mjs puts another version of this module into the command
 * line's and the library's bundles: there the chart code is the chart bundle
 * (dist/chart-bundle.js, svg.ts with vega and vega-lite), run when first asked
 * for, so that vega is not part of those bundles.
 */
export interface ChartModule {
  renderSvg: typeof import('./svg.js').renderSvg;
}

export function loadChartModule(): Promise<ChartModule> {
  return import('./svg.js');
}
