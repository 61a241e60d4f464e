import { DERIVED_COLUMNS, FIELD_SPECS } from '../domain/fields.js';
import { StopError } from '../errors.js';
import type { Note } from '../issues.js';
import type { FormulaDef, Method } from '../domain/method.js';
import { compileFormula, FormulaError, type CompiledFormula, type EvalContext, type SymbolKind } from './formula.js';
import { dependencyOrder } from './order.js';

export { DERIVED_COLUMNS } from '../domain/fields.js';

export interface CompiledMethod {
  /** In the method's (output) order. */
  formulas: CompiledFormula[];
  /** Indexes into `formulas` in evaluation order. */
  order: number[];
}

/** Compile every formula of a method once; a refused formula or a cycle stops the run. */
/** Compiled once per loaded method: the pipeline, the workbook and verify all ask for it. */
const compiledMethods = new WeakMap<Method, CompiledMethod>();

export function compileMethod(method: Method): CompiledMethod {
  let compiled = compiledMethods.get(method);
  if (!compiled) {
    compiled = compileMethodOnce(method);
    compiledMethods.set(method, compiled);
  }
  return compiled;
}

function compileMethodOnce(method: Method): CompiledMethod {
  const symbols = new Map<string, SymbolKind>();
  for (const spec of FIELD_SPECS.values()) symbols.set(spec.name, spec.kind);
  for (const [name, d] of Object.entries(DERIVED_COLUMNS)) symbols.set(name, d.kind);
  for (const f of method.formulas) symbols.set(f.name, 'number');

  const formulas = method.formulas.map((def, i) => {
    try {
      return compileFormula(def, symbols);
    } catch (err) {
      if (err instanceof FormulaError) {
        throw new StopError('method', `formula "${def.name}": ${err.message}`, {
          file: method.file,
          line: def.line,
          column: `formulas[${i}].expr`,
        });
      }
      throw err;
    }
  });
  const byName = new Map(formulas.map((f, i) => [f.name, i]));
  const { order, cycles } = dependencyOrder(
    formulas.map((_, i) => i),
    (i) => formulas[i]!.dependencies.filter((d) => byName.has(d)).map((d) => byName.get(d)!),
  );
  if (cycles.length > 0) {
    const names = cycles[0]!.map((i) => formulas[i]!.name);
    const first = method.formulas[cycles[0]![0]!]!;
    throw new StopError('method', `the formula columns depend on each other in a cycle: ${[...names, names[0]].join(' → ')}`, {
      file: method.file,
      line: first.line,
      column: 'formulas',
    });
  }
  checkCalibration(method, formulas, byName);
  return { formulas, order };
}

/**
 * The efficiency correction and the calibration must agree (issue 14): calibrators
 * taken through the extraction already carry its losses, so pre_extraction_conc
 * must not divide by the efficiency again; standards in solvent need it.
 */
function checkCalibration(method: Method, formulas: CompiledFormula[], byName: Map<string, number>): void {
  const at = byName.get('pre_extraction_conc');
  if (at === undefined) return;
  const corrects = correctsForEfficiency(formulas, byName, at);
  const def = method.formulas[at]!;
  if (method.calibration.includesExtraction && corrects) {
    throw new StopError(
      'method',
      `formula "pre_extraction_conc" divides by the extraction efficiency, but the method says the calibration includes the extraction (calibration: { includes_extraction: true }): the losses would be corrected twice; write it without the efficiency, e.g. extract_conc * dilution * final_volume / sample_volume, or remove includes_extraction`,
      { file: method.file, line: def.line, column: `formulas[${at}].expr` },
    );
  }
}

/** Whether a formula reads the extraction efficiency, directly (extraction_efficiency()) or through another formula. */
export function correctsForEfficiency(formulas: readonly CompiledFormula[], byName: ReadonlyMap<string, number>, start: number): boolean {
  const seen = new Set<number>();
  const stack = [start];
  while (stack.length > 0) {
    const i = stack.pop()!;
    if (seen.has(i)) continue;
    seen.add(i);
    const f = formulas[i]!;
    if (f.node.filter((n) => n.type === 'FunctionNode' && (n as unknown as { fn: { name: string } }).fn.name === 'extraction_efficiency').length > 0) return true;
    for (const d of f.dependencies) {
      const j = byName.get(d);
      if (j !== undefined) stack.push(j);
    }
  }
  return false;
}

export interface EvaluateInput {
  rowCount: number;
  numbers: ReadonlyMap<string, Float64Array>;
  texts: ReadonlyMap<string, readonly string[]>;
  parentRow: Int32Array;
  pairRow: Int32Array;
  /** 1 on rows whose computed cells stay empty. */
  rowError: Uint8Array;
}

export interface Evaluated {
  /** Computed columns by formula name, in method order. */
  columns: Map<string, Float64Array>;
  notes: Note[];
}

/**
 * Evaluate all formula columns for all rows, one column at a time in dependency
 * order, so a cross-row look-up reads a finished column (STYLE.md habit 2).
 * A result that is not a finite number (divide by zero, log of 0) leaves the
 * cell empty with a note; its dependents then see an empty cell.
 */
export function evaluateFormulas(compiled: CompiledMethod, defs: readonly FormulaDef[], input: EvaluateInput): Evaluated {
  const n = input.rowCount;
  const columns = new Map<string, Float64Array>();
  const notes: Note[] = [];
  const ctx: EvalContext = {
    number: (name) => columns.get(name) ?? input.numbers.get(name),
    text: (name) => input.texts.get(name),
    parentRow: input.parentRow,
    pairRow: input.pairRow,
  };
  for (const i of compiled.order) {
    const f = compiled.formulas[i]!;
    const out = new Float64Array(n);
    columns.set(f.name, out); // visible (as it fills) only to later formulas
    const run = f.bind(ctx);
    const rowError = input.rowError;
    for (let r = 0; r < n; r++) {
      if (rowError[r]) {
        out[r] = NaN;
        continue;
      }
      const v = run(r);
      if (typeof v === 'number' && Number.isFinite(v)) out[r] = v;
      else {
        out[r] = NaN;
        if (typeof v === 'number' && !Number.isNaN(v)) {
          notes.push({ row: r, column: f.name, message: `${f.name} is not a finite number (${v > 0 ? '' : '−'}∞, e.g. a division by zero): left empty` });
        }
      }
    }
  }
  const ordered = new Map<string, Float64Array>();
  for (const d of defs) ordered.set(d.name, columns.get(d.name)!);
  return { columns: ordered, notes };
}
