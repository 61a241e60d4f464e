/**
 * "As used" cells of the Results sheet: the value each formula reads, in the
 * method's units and canonical codes, as a spreadsheet formula over the verbatim
 * worklist cell wherever that is expressible:
 * - a number: `IF(G2="",<when empty>,G2*<unit factor>)`, the "when empty" part being the
 *   engine's default chain with method values referenced on the Method sheet
 *   (`Method!$E$71`: an analyte's pKa), e.g. 10^log_k, then the analyte's K, then the
 *   field default; final_volume's default is extractions × solvent_volume;
 * - sample_type, acid_base and analyte: a look-up of the trimmed, lower-cased cell in
 *   the Method sheet's tables (sample type codes, acid/base words, analyte names);
 * - surrogate: the analyte's 1/0 on the Method sheet.
 * A worklist cell holding text a formula cannot read the engine's way (a number stored
 * as text in an XLSX) gets the engine's value and a note saying so. Rows with an input
 * error, and a values-only sheet, get the engine's values.
 */
import { fallbacksOf } from '../../domain/fallbacks.js';
import { FIELD_SPECS, SAMPLE_TYPES, type CanonicalField } from '../../domain/fields.js';
import { parseAcidBase } from '../../chemistry/partition.js';
import type { RecalcResult } from '../../pipeline.js';
import { cell, formulaNumber, formulaText, type CellValue, type PlannedCell } from './cells.js';
import { METHOD_SHEET, rowFactor, type MethodRefs } from './method-sheet.js';
import type { ResultsColumn, ResultsLayout } from './results-layout.js';

export interface AsUsedContext {
  col: ResultsColumn;
  layout: ResultsLayout;
  refs: MethodRefs;
  inputValue: (column: number, row: number) => CellValue;
  inputLetter: (column: number) => string;
  /** Display format of the column's numbers. */
  numFmt?: string;
}

export interface AsUsedPlanner {
  column: number;
  plan(row: number, sheetRow: number, live: boolean): PlannedCell;
}

const WILDCARDS = /[*?~]/;

function literalNote(cellRef: string, header: string, value: CellValue): string {
  return `The cell ${cellRef} (the worklist's column ${JSON.stringify(header)}, as written) holds text (${JSON.stringify(value)}), which a spreadsheet formula cannot read the way phasebook does; the value phasebook read from it is written here.`;
}

export function asUsedPlanner(result: RecalcResult, ctx: AsUsedContext): AsUsedPlanner {
  const { col, layout, refs } = ctx;
  const field = col.field!;
  const { table, method } = result;
  const column = col.column;

  if (field === 'surrogate') {
    return {
      column,
      plan: (r, _R, live) => {
        const ai = table.analyteIndex[r]!;
        const value = ai >= 0 && method.analytes[ai]!.surrogate ? 1 : 0;
        const ref = ai >= 0 ? refs.analyte(ai, 'surrogate') : undefined;
        return live && ref ? cell(value, { formula: ref }) : cell(value);
      },
    };
  }

  const spec = FIELD_SPECS.get(field as CanonicalField)!;
  const src = result.columnMap.fields.get(field as CanonicalField);
  const X = src ? ctx.inputLetter(src.column) : undefined;

  if (spec.kind === 'text') {
    const texts = table.texts.get(field)!;
    const fallback = method.fields.get(field as CanonicalField)?.default;
    const valueOf = (r: number): CellValue => {
      const t = field === 'sample_type' ? table.sampleType[r]! : texts[r]!;
      return t === '' ? null : t;
    };
    let whenEmpty: (r: number) => string | undefined; // formula text for an empty cell
    let present: ((ref: string) => string) | undefined;
    if (field === 'sample_type') {
      const code = fallback === undefined ? '' : String(fallback).toLowerCase();
      const canon = code === '' ? 'sample' : (method.sampleTypes.get(code) ?? (SAMPLE_TYPES as readonly string[]).find((s) => s === code) ?? '');
      whenEmpty = () => formulaText(canon);
      present = refs.lookupKeys.sampleTypeCodes.some((k) => WILDCARDS.test(k))
        ? undefined
        : (ref) => `VLOOKUP(LOWER(TRIM(${ref})),${refs.sampleTypeCodes},2,FALSE)`;
    } else if (field === 'acid_base') {
      const fb = fallback === undefined ? '' : String(fallback);
      whenEmpty = (r) => {
        if (fb !== '') return formulaText(parseAcidBase(fb) ?? '');
        const ai = table.analyteIndex[r]!;
        return (ai >= 0 ? refs.analyte(ai, 'acid_base') : undefined) ?? formulaText('neutral');
      };
      present = (ref) => `VLOOKUP(LOWER(TRIM(${ref})),${refs.acidBaseWords},2,FALSE)`;
    } else if (field === 'analyte') {
      const fb = fallback === undefined ? '' : String(fallback);
      const known = new Map<string, string>();
      method.analytes.forEach((a) => {
        for (const nm of [a.name, ...a.aliases]) known.set(nm.trim().toLowerCase(), a.name);
      });
      whenEmpty = () => formulaText(known.get(fb.toLowerCase()) ?? fb);
      present = refs.lookupKeys.analyteNames.some((k) => WILDCARDS.test(k))
        ? undefined
        : (ref) => `IFERROR(VLOOKUP(LOWER(TRIM(${ref})),${refs.analyteNames},2,FALSE),TRIM(${ref}))`;
    } else {
      const fb = fallback === undefined ? '' : String(fallback);
      whenEmpty = () => formulaText(fb);
      present = (ref) => `TRIM(${ref})`;
    }
    return {
      column,
      plan: (r, R, live) => {
        const value = valueOf(r);
        if (!live) return cell(value);
        if (!src) {
          const f = whenEmpty(r);
          return f !== undefined && f.startsWith(`${METHOD_SHEET}!`) ? cell(value, { formula: f }) : cell(value);
        }
        if (!present) return cell(value);
        const ref = `${X}${R}`;
        return cell(value ?? '', { formula: `IF(TRIM(${ref})="",${whenEmpty(r) ?? '""'},${present(ref)})` });
      },
    };
  }

  // Numeric fields: an empty cell takes the field's chain (domain/fallbacks.ts), as the engine does.
  const numFmt = ctx.numFmt;
  const values = table.numbers.get(field)!;
  const chain = fallbacksOf(field as CanonicalField);
  const logK = result.columnMap.fields.get('log_k');
  /** The formula for an empty cell from step i of the chain on; 'text' when a cell it reads holds text a formula cannot use. */
  const fromStep = (i: number, r: number, R: number): string | undefined | 'text' => {
    const step = chain[i];
    if (step === undefined) return undefined;
    const next = () => fromStep(i + 1, r, R);
    const ai = table.analyteIndex[r]!;
    switch (step.kind) {
      case 'field-default':
        return refs.fieldDefault(field as CanonicalField) ?? next();
      case 'analyte':
        return (ai >= 0 ? refs.analyte(ai, step.key) : undefined) ?? next();
      case 'method-reporting-limit':
        return refs.defaultReportingLimit ?? next();
      case 'ten-to-log-k': {
        if (!logK) return next();
        const raw = ctx.inputValue(logK.column, r);
        if (raw !== null && typeof raw !== 'number') return 'text';
        const rest = next();
        if (rest === 'text') return rest;
        const L = `${ctx.inputLetter(logK.column)}${R}`;
        return `IF(${L}="",${rest ?? '""'},10^${L})`;
      }
      case 'product': {
        const e = layout.asUsed.get(step.of[0])!.letter + R;
        const s = layout.asUsed.get(step.of[1])!.letter + R;
        return `IF(OR(${e}="",${s}=""),"",${e}*${s})`;
      }
    }
  };
  const whenEmpty = (r: number, R: number): string | undefined | 'text' => fromStep(0, r, R);
  return {
    column,
    plan: (r, R, live) => {
      const v = values[r]!;
      const value = Number.isFinite(v) ? v : null;
      // A literal, not cell(): numbers need no sheetText, and this runs for every cell of the column.
      if (!live) return { value, numFmt };
      const empty = whenEmpty(r, R);
      if (!src) {
        if (empty === 'text') return cell(value, { numFmt, mark: 'note', note: literalNote(`${ctx.inputLetter(logK!.column)}${R}`, logK!.header, ctx.inputValue(logK!.column, r)) });
        return empty === undefined ? cell(value, { numFmt }) : cell(value ?? '', { numFmt, formula: empty });
      }
      const ref = `${X}${R}`;
      const raw = ctx.inputValue(src.column, r);
      if (raw !== null && typeof raw !== 'number') return cell(value, { numFmt, mark: 'note', note: literalNote(ref, src.header, raw) });
      if (empty === 'text') return cell(value, { numFmt, mark: 'note', note: literalNote(`${ctx.inputLetter(logK!.column)}${R}`, logK!.header, ctx.inputValue(logK!.column, r)) });
      const k = rowFactor(result, field as CanonicalField, r);
      if (k === undefined) return cell(value, { numFmt });
      const used = k === 1 ? ref : `${ref}*${formulaNumber(k)}`;
      return cell(value ?? '', { numFmt, formula: `IF(${ref}="",${empty ?? '""'},${used})` });
    },
  };
}
