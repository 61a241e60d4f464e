/**
 * A method in plain words, for `phasebook method check`: what the worklist's
 * headers mean, in which units they are read, the lab's codes, the analyte data,
 * the acceptance limits that will judge each control (after the method's own
 * limits are merged over the generic defaults), and the formula columns in the
 * order the engine evaluates them.
 *
 * It reads a loaded, compiled method and returns text; it prints nothing.
 */
import { significant } from '../../format.js';
import type { MathNode } from 'mathjs';
import { parse } from 'yaml';
import { neutralFraction } from '../../chemistry/partition.js';
import { CANONICAL_FIELDS, FIELD_SPECS, SAMPLE_TYPES, type CanonicalField, type SampleType } from '../../domain/fields.js';
import { methodUnit } from '../../columns/map.js';
import { correctsForEfficiency, DERIVED_COLUMNS, type CompiledMethod } from '../../engine/evaluate.js';
import { formatRange, limitsFor } from '../../qc/limits.js';
import { calibrationSentence, reportingSentence } from '../../method/reporting.js';
import type { AnalyteInfo, ControlKind, Method } from '../../domain/method.js';

/** Control types in the order a reader expects them. */
const CONTROL_KINDS: readonly ControlKind[] = ['lcs', 'lcsd', 'ms', 'msd', 'dup', 'qc', 'mdl'];

/** Defaults the engine applies when neither worklist nor method gives a value (DESIGN.md §4). */
const DESIGN_DEFAULTS: Partial<Record<CanonicalField, string>> = {
  sample_type: 'sample',
  batch_id: 'one batch',
  extractions: '1',
  final_volume: 'extractions × solvent_volume',
  dilution: '1',
  partition_coeff: 'the analyte table; none means E = 100 %',
  log_k: 'the analyte table',
  ph: 'the analyte table',
  pka: 'the analyte table',
  acid_base: 'the analyte table, else neutral',
  reporting_limit: 'the analyte table, else defaults.reporting_limit',
};

/** The whole description, sections separated by blank lines. */
export function describeMethod(method: Method, compiled: CompiledMethod): string {
  const sections = [
    headerSection(method),
    unitsSection(method),
    fieldsSection(method),
    sampleTypesSection(method),
    analytesSection(method),
    limitsSection(method),
    qcSection(method),
    reportingSection(method),
    figuresSection(method),
    formulasSection(method, compiled),
  ];
  const warnings = judgingWarnings(method);
  if (warnings.length) sections.push(['Warnings: controls this method cannot judge', ...warnings.map((w) => `  ${w}`)]);
  const calibration = calibrationWarnings(method, compiled);
  if (calibration.length) sections.push(['Warning: calibration', ...calibration.map((w) => `  ${w}`)]);
  return sections.map((lines) => lines.join('\n')).join('\n\n') + '\n';
}

/** A method whose result is not corrected for the efficiency although its standards were not extracted. */
export function calibrationWarnings(method: Method, compiled: CompiledMethod): string[] {
  const byName = new Map(compiled.formulas.map((f, i) => [f.name, i]));
  const at = byName.get('pre_extraction_conc');
  if (at === undefined || method.calibration.includesExtraction || correctsForEfficiency(compiled.formulas, byName, at)) return [];
  return [
    'pre_extraction_conc: the formula does not correct for the extraction efficiency; if the calibrators were taken through the extraction, say so with calibration: { includes_extraction: true }, else divide by extraction_efficiency_pct / 100',
  ];
}

/** What the method leaves controls without (they are then marked not judged, never passed silently). */
export function judgingWarnings(method: Method): string[] {
  const out: string[] = [];
  const usesBlank = method.sampleTypes.size === 0 || [...method.sampleTypes.values()].includes('blank');
  const rlSomewhere = method.defaults.reporting_limit !== undefined || method.analytes.some((a) => a.reporting_limit !== undefined) || method.fields.has('reporting_limit');
  if (usesBlank && !rlSomewhere) {
    out.push('blanks: no reporting limit anywhere (defaults.reporting_limit, an analyte\'s reporting_limit, or a reporting_limit column): a blank is judged only where its row gives one');
  }
  // An mdl row is there for the detection limit; recovery limits for it are the method's choice, not a gap.
  for (const kind of controlKindsUsed(method).filter((k) => k !== 'mdl')) {
    const set = method.limits[kind];
    if (kind === 'dup' ? set?.rpd_max === undefined : !set?.recovery) {
      out.push(`${kind}: no ${kind === 'dup' ? 'RPD limit (rpd_max)' : 'recovery limits'} in the method: such rows are not judged unless an analyte gives them`);
    }
  }
  return out;
}

function headerSection(method: Method): string[] {
  const version = method.version === undefined ? '' : `, version ${method.version}`;
  const lines = [`Method ${method.name}${version}: valid`];
  if (method.title !== method.name) lines.push(`  ${method.title}`);
  lines.push(`  file ${method.file}, SHA-256 ${method.sha256.slice(0, 16)}…`);
  return lines;
}

function unitsSection(method: Method): string[] {
  const u = method.units;
  return [
    'Units the method computes in',
    `  volumes: ${u.volume}`,
    `  concentrations in the sample (results, spikes, reporting limits): ${u.concentration}`,
    `  concentrations in the extract (instrument results, calibration range): ${u.extract_concentration}`,
    '  A header may carry its own unit in brackets, e.g. "Sample Vol (L)"; values are converted once, when read.',
  ];
}

function fieldsSection(method: Method): string[] {
  const rows: string[][] = [['field', 'worklist header', 'read in', 'if missing']];
  for (const field of CANONICAL_FIELDS) {
    const spec = FIELD_SPECS.get(field)!;
    const cfg = method.fields.get(field);
    const headers = [...(cfg?.aliases ?? []), field].map((h) => `"${h}"`);
    const unit = cfg?.unit ?? (spec.dimension === 'extract_concentration' ? method.units.extract_concentration : methodUnit(method, spec.dimension));
    const readIn = spec.kind === 'text' ? 'text' : unit === '' ? 'number' : unit;
    const missing = spec.required
      ? cfg?.default !== undefined
        ? `default ${String(cfg.default)}`
        : 'required'
      : cfg?.default !== undefined
        ? `default ${String(cfg.default)}`
        : (DESIGN_DEFAULTS[field] ?? 'empty');
    rows.push([field, headers.join(' or '), readIn, missing]);
  }
  return [
    'Fields (worklist header → canonical field; headers are compared without case, spaces or punctuation)',
    ...table(rows).map((l) => `  ${l}`),
  ];
}

function sampleTypesSection(method: Method): string[] {
  const lines = ['Sample types (lab code → canonical type, compared without case)'];
  if (method.sampleTypes.size === 0) lines.push('  the method names no lab codes');
  const codes = codeTexts(method);
  for (const [code, type] of method.sampleTypes) lines.push(`  ${codes.get(code) ?? code} → ${type}`);
  lines.push(`  The canonical names (${SAMPLE_TYPES.join(', ')}) are always accepted; an empty cell means sample.`);
  return lines;
}

/** The codes as the method file writes them (the loaded map holds them in lower case). */
function codeTexts(method: Method): Map<string, string> {
  const out = new Map<string, string>();
  let written: unknown;
  try {
    // Keys were checked for uniqueness when the method was loaded (the library's own check is quadratic).
    written = (parse(method.text, { uniqueKeys: false }) as { sample_types?: unknown } | null)?.sample_types;
  } catch {
    return out; // a method built in code, not from this text: show the lower-case codes
  }
  if (written && typeof written === 'object') for (const code of Object.keys(written)) out.set(code.trim().toLowerCase(), code.trim());
  return out;
}

function analytesSection(method: Method): string[] {
  const lines = ['Analytes'];
  if (method.analytes.length === 0) lines.push('  the method names no analytes: every analyte in the worklist uses the worklist columns and the generic limits');
  for (const a of method.analytes) {
    lines.push(`  ${a.name}${a.surrogate ? ' (surrogate)' : ''}${a.aliases.length ? `, also written ${a.aliases.map((x) => `"${x}"`).join(', ')}` : ''}`);
    lines.push(`    ${partitionWords(a)}`);
    const more: string[] = [];
    if (a.reporting_limit !== undefined) more.push(`reporting limit ${num(a.reporting_limit)} ${method.units.concentration}`);
    if (a.calibration_range) more.push(`calibration range ${num(a.calibration_range[0])}–${num(a.calibration_range[1])} ${method.units.extract_concentration} in the extract`);
    if (a.molar_mass !== undefined) more.push(`molar mass ${num(a.molar_mass)} g/mol`);
    if (more.length) lines.push(`    ${more.join('; ')}`);
  }
  if (method.defaults.reporting_limit !== undefined) {
    lines.push(`  Reporting limit where an analyte names none: ${num(method.defaults.reporting_limit)} ${method.units.concentration}`);
  }
  return lines;
}

function partitionWords(a: AnalyteInfo): string {
  if (a.partition_coeff === undefined) return 'no partition coefficient: from the worklist, else the extraction is taken as complete (E = 100 %)';
  const k = a.log_k !== undefined && a.partition_coeff === 10 ** a.log_k ? `K ${num(a.partition_coeff)} (log K ${num(a.log_k)})` : `K ${num(a.partition_coeff)}`;
  if (a.acid_base === undefined || a.acid_base === 'neutral') return `${k}, neutral: D = K at any pH`;
  let text = `${k}, ${a.acid_base} with pKa ${num(a.pka!)}`;
  if (a.ph !== undefined) {
    const f = neutralFraction(a.ph, a.pka!, a.acid_base);
    text += `, extracted at pH ${num(a.ph)}: ${num(100 * f)} % neutral, D ${num(a.partition_coeff * f)}`;
  } else {
    text += '; the pH comes from the worklist';
  }
  return text;
}

function limitsSection(method: Method): string[] {
  const lines = ['Acceptance limits per analyte and control type (inclusive; the method\'s limits merged over the generic defaults)'];
  const used = controlKindsUsed(method);
  const usesBlank = method.sampleTypes.size === 0 || [...method.sampleTypes.values()].includes('blank');
  lines.push(`  control types shown: ${used.join(', ')}${method.sampleTypes.size ? ' (the types the lab codes name)' : ''}`);
  const analytes: Array<AnalyteInfo | undefined> = method.analytes.length ? method.analytes : [undefined];
  for (const a of analytes) {
    lines.push(`  ${a ? a.name : 'any analyte'}${a?.surrogate ? ' (surrogate: its recovery is judged on every row it is spiked in)' : ''}`);
    const rows: string[][] = [];
    const kinds: ControlKind[] = a?.surrogate ? ['surrogate'] : used;
    for (const kind of kinds) {
      const type: SampleType = kind === 'surrogate' ? 'sample' : kind;
      const levels = kind === 'qc' ? levelNames(method, a) : [];
      for (const level of ['', ...levels]) {
        const lim = limitsFor(method, { analyte: a, sampleType: type, qcLevel: level });
        const parts: string[] = [];
        if (lim.recovery) parts.push(`recovery ${formatRange(lim.recovery)}`);
        if (lim.rpdMax !== undefined) parts.push(`RPD ≤ ${num(lim.rpdMax)} %`);
        rows.push([level ? `${kind} at ${level}` : kind, parts.join(', ') || 'no limits', `(${lim.origin})`]);
      }
    }
    lines.push(...table(rows).map((l) => `    ${l}`));
    if (usesBlank && !a?.surrogate) {
      const rl = a?.reporting_limit ?? method.defaults.reporting_limit;
      lines.push(`    blank: result below the reporting limit${rl === undefined ? ' (given per row in the worklist)' : ` ${num(rl)} ${method.units.concentration}`}`);
    }
  }
  return lines;
}

function controlKindsUsed(method: Method): ControlKind[] {
  if (method.sampleTypes.size === 0) return [...CONTROL_KINDS];
  const named = new Set<string>(method.sampleTypes.values());
  // `mdl` is always accepted by its own name: a method that sets limits for it uses it.
  if (method.limits.mdl || method.analytes.some((a) => a.limits.mdl)) named.add('mdl');
  return CONTROL_KINDS.filter((k) => named.has(k));
}

function levelNames(method: Method, a: AnalyteInfo | undefined): string[] {
  const names = new Set<string>();
  for (const set of [method.limits.qc, a?.limits.qc]) for (const k of Object.keys(set?.levels ?? {})) names.add(k.toLowerCase());
  return [...names];
}

function qcSection(method: Method): string[] {
  const q = method.qc;
  const lines = ['QC options'];
  if (q.outlierTest === 'none') lines.push('  outlier test: none');
  else {
    const name = q.outlierTest === 'grubbs' ? "Grubbs' test (two-sided)" : "Dixon's Q test";
    lines.push(`  outlier test: ${name} at α = ${num(q.alpha)}, on the recoveries of each batch, analyte, type and level with 3 or more values`);
  }
  const rule = `at least ${fraction(q.runRuleAll)} of all qc rows and ${fraction(q.runRulePerLevel)} of those at each level must pass`;
  const when = q.runRule === 'on' ? 'on' : q.runRule === 'off' ? 'off' : 'auto (applied where qc rows exist)';
  lines.push(`  run rule: ${when}${q.runRule === 'off' ? '' : `; ${rule}`}`);
  return lines;
}

function reportingSection(method: Method): string[] {
  return ['Calibration and reporting', `  calibration: ${calibrationSentence(method)}`, `  ${reportingSentence(method)}`];
}

/** What `phasebook figures` and `recalc --history` take from the method (figures/): points needed, u(Cref), a fixed U. */
function figuresSection(method: Method): string[] {
  const f = method.figures;
  const lines = [
    "The lab's own figures (phasebook figures, recalc --history)",
    `  measurement uncertainty (Nordtest TR 537): u(Rw) from ${f.minPointsRw} lcs recoveries at least (each qc level from as many of its own), the bias from ${f.minPointsBias} ms and msd recoveries at least (figures.min_points_rw, figures.min_points_bias); U = 2 · u_c`,
    '  detection limit (40 CFR 136 App. B Rev. 2): from 7 or more mdl rows (low-level spiked blanks) and 7 or more method blanks',
    `  reported results: ${method.reporting.withUncertainty ? '"x ± U" where a sample result carries an expanded uncertainty (reporting.with_uncertainty)' : 'without their expanded uncertainty (reporting.with_uncertainty: false); the U has its own column'}`,
  ];
  const rows: string[][] = [];
  for (const a of method.analytes) {
    if (a.surrogate) continue;
    const cref = a.spike_uncertainty_pct === undefined ? 'u(Cref) 0 % (no spike_uncertainty_pct)' : `u(Cref) ${num(a.spike_uncertainty_pct)} %`;
    const fixed = a.expanded_uncertainty_pct === undefined ? 'U from the QC history' : `fixed U ${num(a.expanded_uncertainty_pct)} % (k = 2; expanded_uncertainty_pct), over any history`;
    rows.push([a.name, cref, fixed]);
  }
  if (rows.length) lines.push(...table(rows).map((l) => `    ${l}`));
  else lines.push('  the method names no analytes: u(Cref) 0 % and the U from the QC history for every analyte');
  return lines;
}

function formulasSection(method: Method, compiled: CompiledMethod): string[] {
  const formulaNames = new Set(method.formulas.map((f) => f.name));
  const lines = ['Formula columns, in the order they are evaluated'];
  compiled.order.forEach((i, step) => {
    const f = compiled.formulas[i]!;
    const def = method.formulas[i]!;
    const unit = def.unit ? ` [${def.unit}]` : '';
    lines.push(`  ${step + 1}. ${f.name}${unit} = ${f.expr.replace(/\s+/g, ' ').trim()}`);
    if (def.description) lines.push(`     ${def.description}`);
    const crossRow = crossRowReads(f.node);
    const own = f.dependencies.filter((d) => !crossRow.some((c) => c.column === d && !readsOwnRow(f.node, d)));
    const formulas = own.filter((d) => formulaNames.has(d));
    const fields = own.filter((d) => !formulaNames.has(d) && !(d in DERIVED_COLUMNS));
    const derived = own.filter((d) => d in DERIVED_COLUMNS);
    const reads: string[] = [];
    if (formulas.length) reads.push(`formula column${formulas.length > 1 ? 's' : ''} ${formulas.join(', ')}`);
    if (fields.length) reads.push(`field${fields.length > 1 ? 's' : ''} ${fields.join(', ')}`);
    for (const d of derived) reads.push(`${d} (${DERIVED_COLUMNS[d]!.description})`);
    for (const c of crossRow) reads.push(`${c.column} of the ${c.via === 'parent' ? 'parent row' : 'paired row'}`);
    lines.push(`     reads ${reads.length ? reads.join('; ') : 'nothing (a constant)'}`);
  });
  const evalOrder = compiled.order.map((i) => compiled.formulas[i]!.name);
  const written = method.formulas.map((f) => f.name);
  if (evalOrder.join() !== written.join()) lines.push(`  Written to the outputs in the method's order: ${written.join(', ')}`);
  return lines;
}

/** Columns read from another row through parent() or pair(). */
function crossRowReads(node: MathNode): Array<{ via: 'parent' | 'pair'; column: string }> {
  const out: Array<{ via: 'parent' | 'pair'; column: string }> = [];
  node.traverse((n) => {
    if (n.type !== 'FunctionNode') return;
    const fn = (n as unknown as { fn: { name?: string }; args: MathNode[] }).fn.name;
    const arg = (n as unknown as { args: MathNode[] }).args[0];
    if ((fn === 'parent' || fn === 'pair') && arg?.type === 'SymbolNode') {
      const column = (arg as unknown as { name: string }).name;
      if (!out.some((c) => c.via === fn && c.column === column)) out.push({ via: fn, column });
    }
  });
  return out;
}

/** True when the column is also read on the formula's own row (outside parent()/pair()). */
function readsOwnRow(node: MathNode, column: string): boolean {
  let found = false;
  const visit = (n: MathNode, insideCross: boolean): void => {
    if (n.type === 'SymbolNode' && !insideCross && (n as unknown as { name: string }).name === column) found = true;
    const fnName = n.type === 'FunctionNode' ? (n as unknown as { fn: { name?: string } }).fn.name : undefined;
    const cross = insideCross || fnName === 'parent' || fnName === 'pair';
    n.forEach((child) => visit(child, cross));
  };
  visit(node, false);
  return found;
}

function fraction(f: number): string {
  if (Math.abs(f - 2 / 3) < 1e-9) return '2/3';
  return `${num(100 * f)} %`;
}

/** Numbers for reading: up to 4 significant figures, no trailing zeros. */
function num(x: number): string {
  return significant(x, 4);
}

/** Left-aligned columns, two spaces apart. */
function table(rows: string[][]): string[] {
  const widths: number[] = [];
  for (const r of rows) r.forEach((c, i) => (widths[i] = Math.max(widths[i] ?? 0, c.length)));
  return rows.map((r) => r.map((c, i) => (i === r.length - 1 ? c : c.padEnd(widths[i]!))).join('  ').trimEnd());
}
