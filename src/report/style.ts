/** The report's own plain style, inlined into every file (no external sheets or fonts). */
export const REPORT_CSS = `
:root { color-scheme: light; --ink: #1f2a36; --muted: #5c6773; --rule: #d5dde6; --bad: #a4262c; --good: #1d6b3a; --paper: #ffffff; --tint: #f4f6f8; }
* { box-sizing: border-box; }
body { margin: 0; background: var(--paper); color: var(--ink); font: 14px/1.45 system-ui, -apple-system, "Segoe UI", sans-serif; }
main { max-width: 1100px; margin: 0 auto; padding: 24px 28px 48px; }
h1 { font-size: 22px; margin: 0 0 4px; }
h2 { font-size: 17px; margin: 32px 0 8px; padding-bottom: 4px; border-bottom: 2px solid var(--ink); }
h3 { font-size: 15px; margin: 22px 0 6px; }
p.lead { margin: 0 0 16px; color: var(--muted); }
.verdict { display: inline-block; font-weight: 700; letter-spacing: 0.06em; padding: 4px 14px; border: 2px solid currentColor; border-radius: 3px; }
.verdict.pass { color: var(--good); }
.verdict.fail { color: var(--bad); }
ul.reasons { margin: 8px 0 0; padding-left: 20px; }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 2px 16px; margin: 16px 0 0; font-size: 13px; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; overflow-wrap: anywhere; }
code, .mono { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, monospace; font-size: 12px; }
table { border-collapse: collapse; width: 100%; margin: 6px 0 12px; font-size: 13px; }
th, td { text-align: left; vertical-align: top; padding: 5px 8px; border-bottom: 1px solid var(--rule); }
th { background: var(--tint); font-weight: 600; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.fail td.status, td.fail { color: var(--bad); font-weight: 600; }
tr.current td { background: #fbf6e9; }
figure.chart { margin: 8px 0 18px; overflow-x: auto; }
figure.chart svg { display: block; max-width: 100%; height: auto; }
figcaption { color: var(--muted); font-size: 12px; margin-top: 4px; }
.note { color: var(--muted); }
footer { margin-top: 40px; color: var(--muted); font-size: 12px; }
@media print {
  @page { size: A4; margin: 14mm 12mm 16mm; }
  body { font-size: 11px; }
  main { max-width: none; padding: 0; }
  h1 { font-size: 18px; }
  h2 { font-size: 14px; margin-top: 18px; }
  h2, h3 { break-after: avoid; }
  table { font-size: 10px; }
  th, td { padding: 2px 5px; }
  thead { display: table-header-group; }
  tr, dl.facts, ul.reasons li, ul.failed li { break-inside: avoid; }
  th, tr.current td { background: none; }
  th { border-bottom: 1.5px solid var(--ink); }
  tr.current td { font-weight: 600; }
  #recoveries, #history, #uncertainty { break-before: page; }
  figure.chart { break-inside: avoid; overflow: visible; }
  figure.chart svg { max-width: 100%; max-height: 200mm; width: auto; }
  footer { margin-top: 16px; }
}
`;
