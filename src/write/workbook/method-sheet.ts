/**
 * The Method sheet: the method as applied to this worklist. Fields with their
 * units and the worklist column each came from, the look-up tables the Results
 * sheet's "as used" formulas read (sample type codes, acid/base words, analyte
 * names), analyte data, acceptance limits, every formula as written, the QC
 * options, and the method file's full text, one line per row; `phasebook verify`
 * re-reads the method from that text.
 *
 * Cells the Results formulas reference (analyte data, field defaults, look-up
 * ranges) are handed back as absolute references in MethodRefs.
 */
import { designDefault, fallbackWords } from '../../domain/fallbacks.js';
import { FIELD_SPECS, SAMPLE_TYPES, type CanonicalField } from '../../domain/fields.js';
import { calibrationSentence, roundingWords } from '../../method/reporting.js';
import type { ControlKind, LimitSet, LimitTable, Method } from '../../domain/method.js';
import type { RecalcResult } from '../../pipeline.js';
import { COMPARISON_RULE } from '../../qc/compare.js';
import { inHouseKey, type InHouseLimits } from '../../qc/limits.js';
import type { UncertaintyPoint } from '../../qc/uncertainty.js';
import { ACID_WORDS, BASE_WORDS, NEUTRAL_WORDS } from '../sheet-formula.js';
import { SheetBuilder } from './builder.js';
import { absoluteRange, absoluteRef, cell, sheetText, tableRows, titleRow, type CellValue, type SheetPlan, type SheetRows } from './cells.js';

export const METHOD_SHEET = 'Method';
export const METHOD_TEXT_TITLE = 'Method file text';
export const LIMITS_TITLE = 'Acceptance limits';
export const LINE_ENDS_KEY = 'line ends of the method file';
export const IN_HOUSE_TITLE = 'In-house recovery limits applied (from the QC history)';
export const UNCERTAINTY_TITLE = 'Expanded uncertainty of the results';
export const UNCERTAINTY_HEADERS = ['analyte', 'U % of the result', 'k', 'from', 'source'] as const;
export const UNCERTAINTY_POINTS_TITLE = 'Recoveries behind the expanded uncertainty (from the QC history)';
export const UNCERTAINTY_POINT_KEYS = { file: 'QC history', until: 'history up to' } as const;
export const UNCERTAINTY_POINT_HEADERS = ['analyte', 'sample type', 'qc level', 'recovery %', 'run time', 'worklist', 'batch', 'sample id'] as const;
export const LIMITS_HEADERS = ['scope', 'control type', 'qc level', 'recovery low %', 'recovery high %', 'RPD max %', 'blank: part of the RL'] as const;
export const IN_HOUSE_HEADERS = ['analyte', 'control type', 'qc level', 'recovery low %', 'recovery high %', 'points'] as const;

/** The in-house limits that judged this run's controls, one per (analyte, control type), from the rows they judged. */
export function inHouseApplied(result: RecalcResult): { analyte: string; type: string; level: string; low: number; high: number; n: number }[] {
  const seen = new Map<string, { analyte: string; type: string; level: string; low: number; high: number; n: number }>();
  const analyte = result.table.texts.get('analyte')!;
  const qcLevel = result.table.texts.get('qc_level')!;
  result.qc.limits.forEach((lim, r) => {
    const m = /in-house control limits \(mean \u00b1 3s of (\d+) /.exec(lim?.origin ?? '');
    if (!m || !lim.recovery) return;
    const type = result.table.sampleType[r]!;
    const level = qcLevel[r]!.trim().toLowerCase();
    const key = `${analyte[r]!.trim().toLowerCase()}\u0000${type}\u0000${level}`;
    if (!seen.has(key)) seen.set(key, { analyte: analyte[r]!, type, level, low: lim.recovery[0], high: lim.recovery[1], n: Number(m[1]) });
  });
  return [...seen.values()];
}

/** The in-house limits table's rows, as the Method sheet writes them and the integrity digest takes them. */
export function inHouseRows(result: RecalcResult): CellValue[][] {
  return inHouseApplied(result).map((e) => [e.analyte, e.type, e.level || null, e.low, e.high, e.n]);
}

const LINE_END_TEXT: Record<string, string> = { '\n': 'LF', '\r\n': 'CRLF', '\r': 'CR' };

/** The method file's line ends (the first one found), by name; verify joins the text lines with it. */
export function lineEnds(text: string): string {
  const m = /\r\n|\r|\n/.exec(text);
  return m ? LINE_END_TEXT[m[0]]! : 'LF';
}

/** The line end a name stands for (LF when unknown). */
export function lineEndOf(name: string): string {
  return Object.entries(LINE_END_TEXT).find(([, v]) => v === name)?.[0] ?? '\n';
}

/** The method text split into the lines the Method sheet shows. */
export function methodLines(text: string): string[] {
  return text.split(/\r\n|\r|\n/);
}

/** Analyte data the Results formulas may reference. */
export type AnalyteKey = 'partition_coeff' | 'pka' | 'ph' | 'reporting_limit' | 'acid_base' | 'surrogate';

export interface MethodRefs {
  /** The default of a field (a number or text cell), when there is one. */
  fieldDefault(field: CanonicalField): string | undefined;
  /** An analyte's value; undefined when the method gives none (acid_base and surrogate always exist). */
  analyte(index: number, key: AnalyteKey): string | undefined;
  /** The method's default reporting limit, when it has one. */
  defaultReportingLimit: string | undefined;
  /** Look-up ranges, two columns each: key (lower case) → value. */
  sampleTypeCodes: string;
  acidBaseWords: string;
  analyteNames: string;
  /** Keys of each look-up table, for deciding whether a look-up is safe (no wildcards). */
  lookupKeys: { sampleTypeCodes: string[]; analyteNames: string[] };
}

/** What fills an empty text cell; numeric fields say their chain (domain/fallbacks.ts). */
const WHEN_EMPTY_TEXT: Partial<Record<CanonicalField, string>> = {
  sample_type: 'sample (or the field default)',
  batch_id: 'one batch',
  acid_base: "the analyte's acid_base (Analytes), else neutral",
};

/** A field's "when the cell is empty" words. */
function whenEmptyWords(spec: { name: CanonicalField; kind: 'text' | 'number'; required: boolean }, hasDefault: boolean): string {
  const chain = spec.kind === 'number' ? fallbackWords(spec.name, { hasDefault }) : '';
  const words = WHEN_EMPTY_TEXT[spec.name] ?? chain;
  if (words === '') return spec.required ? 'required' : 'empty';
  return spec.name === 'partition_coeff' ? `${words}; none: E = 100 %` : words;
}

export interface MethodSheet {
  plan: SheetPlan;
  refs: MethodRefs;
}

/**
 * Plan the Method sheet. `formulaForms` gives, per formula column, how the
 * Results sheet carries it (a formula, or why not); cell positions do not depend
 * on it, so refs can be taken from a first call without it.
 */
export function planMethodSheet(result: RecalcResult, options: { formulaForms?: readonly string[] } = {}): MethodSheet {
  const { method } = result;
  const b = new SheetBuilder();
  const conc = method.units.concentration;
  const vol = method.units.volume;

  b.title('Method as applied');
  b.keyValue('name', method.name);
  b.keyValue('title', method.title);
  b.keyValue('version', method.version ?? null);
  b.keyValue('description', method.description?.trim() ?? null);
  b.keyValue('file', method.file);
  b.keyValue('SHA-256 of the method file', method.sha256);
  b.keyValue(LINE_ENDS_KEY, lineEnds(method.text));
  b.keyValue('volume unit', vol);
  b.keyValue('concentration unit', conc);
  b.keyValue('extract concentration unit', method.units.extract_concentration);
  const rlRow = b.keyValue(`default reporting limit [${conc}]`, method.defaults.reporting_limit ?? null);
  const defaultReportingLimit = method.defaults.reporting_limit === undefined ? undefined : absoluteRef(METHOD_SHEET, 2, rlRow);
  b.blank();

  // Fields.
  b.title('Fields', 'section');
  const fieldDefaults = new Map<CanonicalField, string>();
  const fieldRows: CellValue[][] = [];
  const fieldHeaderRow = b.nextRow;
  for (const spec of FIELD_SPECS.values()) {
    const src = result.columnMap.fields.get(spec.name);
    const cfg = method.fields.get(spec.name);
    // The engine fills a numeric field only from a numeric default (columns/table.ts).
    const methodDefault = spec.kind === 'number' && typeof cfg?.default !== 'number' ? undefined : cfg?.default;
    const ownDefault = designDefault(spec.name);
    const dflt = methodDefault ?? ownDefault ?? null;
    const from = methodDefault !== undefined ? 'method' : ownDefault !== undefined ? 'phasebook' : null;
    const unit = spec.dimension === 'none' ? '' : spec.dimension === 'volume' ? vol : conc;
    let factor: CellValue = null;
    if (src && spec.kind === 'number') factor = src.factor ?? 'per analyte (from its molar mass)';
    if (dflt !== null) fieldDefaults.set(spec.name, absoluteRef(METHOD_SHEET, 9, fieldHeaderRow + 1 + fieldRows.length));
    fieldRows.push([
      spec.name,
      spec.description,
      spec.kind,
      unit || null,
      src?.header ?? '(none)',
      src ? src.fromUnit || null : null,
      factor,
      cfg?.aliases.length ? cfg.aliases.join('; ') : null,
      dflt,
      from,
      whenEmptyWords(spec, methodDefault !== undefined),
    ]);
  }
  b.table(
    ['field', 'meaning', 'kind', 'unit in the method', 'worklist column', 'written in', 'factor to the method unit', 'aliases', 'default', 'default from', 'when the cell is empty'],
    fieldRows,
  );
  b.blank();

  // Look-up tables.
  b.title('Sample type codes (code in lower case → sample type)', 'section');
  const codes: [string, string][] = [];
  for (const [code, type] of method.sampleTypes) if (code !== '') codes.push([code, type]);
  for (const t of SAMPLE_TYPES) if (!method.sampleTypes.has(t)) codes.push([t, t]);
  const codeTable = b.table(['code', 'sample type'], codes);
  b.blank();

  b.title('Acid/base words (word in lower case → form)', 'section');
  const words: [string, string][] = [
    ...ACID_WORDS.map((w): [string, string] => [w, 'acid']),
    ...BASE_WORDS.map((w): [string, string] => [w, 'base']),
    ...NEUTRAL_WORDS.filter((w) => w !== '').map((w): [string, string] => [w, 'neutral']),
  ];
  const wordTable = b.table(['word', 'form'], words);
  b.blank();

  b.title('Analyte names (name or alias in lower case → analyte)', 'section');
  const names: [string, string][] = [];
  const seenNames = new Set<string>();
  method.analytes.forEach((a) => {
    for (const n of [a.name, ...a.aliases]) {
      const key = n.trim().toLowerCase();
      // The engine keeps the last analyte that claims a name (columns/table.ts).
      if (seenNames.has(key)) {
        const i = names.findIndex(([k]) => k === key);
        names[i] = [key, a.name];
      } else {
        seenNames.add(key);
        names.push([key, a.name]);
      }
    }
  });
  const nameTable = b.table(['name or alias', 'analyte'], names.length ? names : [['', '']]);
  b.blank();

  // Analytes.
  b.title('Analytes', 'section');
  const extractUnit = method.units.extract_concentration;
  const analyteCols: Record<AnalyteKey, number> = { partition_coeff: 3, pka: 5, acid_base: 6, ph: 7, reporting_limit: 8, surrogate: 12 };
  const analyteHeader = b.nextRow;
  b.table(
    [
      'analyte',
      'aliases',
      'partition_coeff',
      'log_k',
      'pka',
      'acid_base',
      'ph',
      `reporting_limit [${conc}]`,
      `calibration low [${extractUnit}]`,
      `calibration high [${extractUnit}]`,
      'molar_mass [g/mol]',
      'surrogate (1 = yes)',
    ],
    method.analytes.map((a) => [
      a.name,
      a.aliases.length ? a.aliases.join('; ') : null,
      a.partition_coeff ?? null,
      a.log_k ?? null,
      a.pka ?? null,
      a.acid_base ?? 'neutral',
      a.ph ?? null,
      a.reporting_limit ?? null,
      a.calibration_range?.[0] ?? null,
      a.calibration_range?.[1] ?? null,
      a.molar_mass ?? null,
      a.surrogate ? 1 : 0,
    ]),
  );
  b.blank();

  // Limits.
  b.title(LIMITS_TITLE, 'section');
  b.table([...LIMITS_HEADERS], limitRows(method));
  b.blank();

  // In-house limits: where the method judges recovery by the QC history's limits, the
  // ones applied are recorded here, so verify can judge again without the history.
  if (method.qc.limitsSource === 'in_house') {
    b.title(IN_HOUSE_TITLE, 'section');
    b.table(
      [...IN_HOUSE_HEADERS],
      inHouseRows(result),
    );
    b.blank();
  }

  // The expanded uncertainty the results carry, so verify can give it again without the history.
  if (result.uncertainty) {
    b.title(UNCERTAINTY_TITLE, 'section');
    b.table(
      [...UNCERTAINTY_HEADERS],
      [...result.uncertainty.byAnalyte.values()].map((u) => [u.analyte, u.pct, u.k, u.origin, cell(u.source, { style: 'wrap' })]),
    );
    b.blank();
    // The recoveries each U from the history was derived from: verify derives the U again from them.
    const fromHistory = [...result.uncertainty.byAnalyte.values()].filter((u) => u.origin === 'history' && u.history);
    if (fromHistory.length > 0) {
      b.title(UNCERTAINTY_POINTS_TITLE, 'section');
      b.keyValue(UNCERTAINTY_POINT_KEYS.file, fromHistory[0]!.history!.file);
      b.keyValue(UNCERTAINTY_POINT_KEYS.until, fromHistory[0]!.history!.until);
      b.table(
        [...UNCERTAINTY_POINT_HEADERS],
        fromHistory.flatMap((u) => u.history!.points.map((p) => [u.analyte, p.sampleType, p.qcLevel || null, p.recoveryPct, p.runTime, p.worklistName, p.batchId, p.sampleId])),
      );
      b.blank();
    }
  }

  // Formulas.
  b.title('Formula columns', 'section');
  b.table(
    ['column', 'unit', 'expression as written', 'description', 'in the Results sheet'],
    method.formulas.map((f, i) => [
      f.name,
      f.unit || null,
      f.expr,
      f.description ?? null,
      options.formulaForms?.[i] ?? null,
    ]).map((r) => r.map((v, j) => (j >= 2 ? cell(v, { style: 'wrap' }) : v))),
  );
  b.blank();

  b.title('QC options', 'section');
  b.keyValue('outlier test', method.qc.outlierTest);
  b.keyValue('alpha', method.qc.alpha);
  b.keyValue('run rule', method.qc.runRule);
  b.keyValue('run rule: fraction of all qc rows that must pass', method.qc.runRuleAll);
  b.keyValue('run rule: fraction at each level that must pass', method.qc.runRulePerLevel);
  b.keyValue('comparison with limits', COMPARISON_RULE);
  b.blank();

  b.title('Calibration and reporting', 'section');
  b.keyValue('calibration', cell(calibrationSentence(method), { style: 'wrap' }));
  b.keyValue('significant figures', method.reporting.significantFigures);
  b.keyValue('rounding of ties', roundingWords(method));
  b.keyValue('above the calibration range', method.reporting.aboveRange);
  b.blank();

  b.title(METHOD_TEXT_TITLE, 'section');
  const lines = methodLines(method.text).map(sheetText);
  b.table(
    ['line', 'text'],
    lines.map((line, i) => [i + 1, line === '' ? null : line]),
  );

  const refs: MethodRefs = {
    fieldDefault: (field) => fieldDefaults.get(field),
    analyte: (index, key) => {
      const a = method.analytes[index];
      if (!a) return undefined;
      if (key !== 'acid_base' && key !== 'surrogate' && a[key] === undefined) return undefined;
      return absoluteRef(METHOD_SHEET, analyteCols[key], analyteHeader + 1 + index);
    },
    defaultReportingLimit,
    sampleTypeCodes: absoluteRange(METHOD_SHEET, { column: 1, row: codeTable.firstRow }, { column: 2, row: codeTable.lastRow }),
    acidBaseWords: absoluteRange(METHOD_SHEET, { column: 1, row: wordTable.firstRow }, { column: 2, row: wordTable.lastRow }),
    analyteNames: absoluteRange(METHOD_SHEET, { column: 1, row: nameTable.firstRow }, { column: 2, row: nameTable.lastRow }),
    lookupKeys: { sampleTypeCodes: codes.map(([k]) => k), analyteNames: names.map(([k]) => k) },
  };

  return {
    plan: b.plan(METHOD_SHEET, { widths: [30, 40, 16, 16, 18, 14, 16, 18, 16, 16, 16, 30] }),
    refs,
  };
}

const KINDS: readonly ControlKind[] = ['blank', 'lcs', 'lcsd', 'ms', 'msd', 'dup', 'qc', 'mdl', 'surrogate'];

/** One row per (scope, control type, qc level) that sets a limit. */
export function limitRows(method: Method): CellValue[][] {
  const rows: CellValue[][] = [];
  const addTable = (scope: string, table: LimitTable) => {
    for (const kind of KINDS) {
      const set = table[kind];
      if (!set) continue;
      const push = (level: string, s: LimitSet) => {
        if (!s.recovery && s.rpd_max === undefined && s.max_fraction_of_rl === undefined) return;
        rows.push([scope, kind, level || null, s.recovery?.[0] ?? null, s.recovery?.[1] ?? null, s.rpd_max ?? null, s.max_fraction_of_rl ?? null]);
      };
      push('', set);
      for (const [level, s] of Object.entries(set.levels ?? {})) push(level, s);
    }
  };
  addTable('method', method.limits);
  for (const a of method.analytes) addTable(`analyte ${a.name}`, a.limits);
  return rows;
}

/** The factor that converts this row's cell of a field into the method's unit; undefined when it cannot. */
export function rowFactor(result: RecalcResult, field: CanonicalField, row: number): number | undefined {
  const src = result.columnMap.fields.get(field);
  if (!src) return undefined;
  if (src.factor !== undefined) return src.factor;
  // Through the analyte's molar mass: the factor the columns stage used for this row's analyte.
  return result.table.molarFactors.get(field)?.get(result.table.analyteIndex[row]!);
}

// ---- read back (verify): each table as this module laid it out --------------------------------

/** The method text as the Method sheet holds it, one line a row under its title, joined by the recorded line ends. */
export function readMethodText(sheet: SheetRows): { text: string; firstRow: number } {
  const title = titleRow(sheet, METHOD_TEXT_TITLE);
  let ends = '\n';
  for (let r = 1; r <= sheet.lastRow; r++) {
    const cells = sheet.row(r);
    if (cells.get(1)?.value === LINE_ENDS_KEY) ends = lineEndOf(String(cells.get(2)?.value ?? ''));
  }
  const lines: string[] = [];
  const firstRow = title + 2;
  if (title > 0) {
    for (let r = firstRow; r <= sheet.lastRow; r++) {
      const cells = sheet.row(r);
      if (typeof cells.get(1)?.value !== 'number') break;
      const v = cells.get(2)?.value;
      lines.push(v === null || v === undefined ? '' : String(v));
    }
  }
  return { text: lines.join(ends), firstRow };
}

/** The in-house limits the run applied, as the sheet recorded them (undefined when it records none). */
export function readInHouseLimits(sheet: SheetRows): InHouseLimits | undefined {
  const rows = tableRows(sheet, IN_HOUSE_TITLE, IN_HOUSE_HEADERS.length);
  if (!rows) return undefined;
  const out = new Map<string, { low: number; high: number; n: number }>();
  for (const [analyte, type, level, low, high, n] of rows) {
    if (typeof low !== 'number' || typeof high !== 'number') continue;
    out.set(inHouseKey(String(analyte ?? ''), String(type ?? ''), String(level ?? '')), { low, high, n: typeof n === 'number' ? n : 0 });
  }
  return out;
}

/** The acceptance limits table and the in-house limits table as stored, for the integrity digest. */
export function readLimitRows(sheet: SheetRows): CellValue[][] {
  return [...(tableRows(sheet, LIMITS_TITLE, LIMITS_HEADERS.length) ?? []), ...(tableRows(sheet, IN_HOUSE_TITLE, IN_HOUSE_HEADERS.length) ?? [])];
}

/** The recoveries a U from the history was derived from, with the history's name and end (undefined when none are listed). */
export function readUncertaintyPoints(sheet: SheetRows): { file: string; until: string; points: Array<UncertaintyPoint & { analyte: string }> } | undefined {
  const title = titleRow(sheet, UNCERTAINTY_POINTS_TITLE);
  if (title === 0) return undefined;
  const text = (v: unknown) => (v === null || v === undefined ? '' : String(v));
  // The title, the history's name, its end, then the table's header: the points start four rows down.
  const rows = tableRows(sheet, UNCERTAINTY_POINTS_TITLE, UNCERTAINTY_POINT_HEADERS.length, { headerOffset: 4 }) ?? [];
  return {
    file: text(sheet.row(title + 1).get(2)?.value),
    until: text(sheet.row(title + 2).get(2)?.value),
    points: rows.map(([analyte, sampleType, qcLevel, recovery, runTime, worklistName, batchId, sampleId]) => ({
      analyte: text(analyte),
      sampleType: text(sampleType),
      qcLevel: text(qcLevel),
      recoveryPct: typeof recovery === 'number' ? recovery : NaN,
      runTime: text(runTime),
      worklistName: text(worklistName),
      batchId: text(batchId),
      sampleId: text(sampleId),
    })),
  };
}
