import { FILL_ORDER, fallbacksOf } from '../domain/fallbacks.js';
import { parseAcidBase, type AcidBase } from '../chemistry/partition.js';
import { rowMessage, type Flag, type Note } from '../issues.js';
import type { AnalyteInfo, Method } from '../domain/method.js';
import type { RawTable } from '../read/types.js';
import { FIELD_SPECS, SAMPLE_TYPES, type CanonicalField, type SampleType } from '../domain/fields.js';
import type { ColumnMap, FieldSource } from './map.js';
import { cellText, parseNumberCell, type NumberCell } from './numbers.js';
import { decideFormat, type NumberFormat } from './number-format.js';
import { NonDetectReader } from './nondetect.js';
import { conversionFactor } from './units.js';

/** Where a value in the work table came from, per cell. */
export const ValueSource = {
  Worklist: 0,
  /** Filled from the method (analyte data, a field default) or a design default. */
  Default: 1,
  Empty: 2,
} as const;

/**
 * The columnar table the engine computes on: canonical numeric fields as
 * Float64Array in the method's units (NaN = empty), text fields as string[].
 */
export interface WorkTable {
  rowCount: number;
  numbers: Map<string, Float64Array>;
  texts: Map<string, string[]>;
  /** Per numeric field, where each value came from. */
  sources: Map<string, Uint8Array>;
  /** Canonical sample type per row ('' when it could not be read). */
  sampleType: (SampleType | '')[];
  /** Index into method.analytes per row, −1 when the method does not know the analyte. */
  analyteIndex: Int32Array;
  /** 1 on rows with an input error: their computed cells stay empty. */
  rowError: Uint8Array;
  /** How this worklist writes its numbers: declared by the method, or decided from its cells. */
  numberFormat: NumberFormat;
  /** 1 on carried rows (calibrators): in every output as written, no computed cells, no flags. */
  carried: Uint8Array;
  /** 1 where the result (extract_conc) is a non-detect: its value stays empty (nondetect.ts). */
  nondetect: Uint8Array;
  /** A non-detect's stated limit (`< 0.5`), in the method's concentration unit; NaN when none is stated. */
  nondetectLimit: Float64Array;
  /**
   * Per field whose unit converts through the analyte's molar mass (ng/mL ↔ nmol/L), the factor used for
   * each analyte (by its index in method.analytes): the workbook's as-used formulas repeat exactly it.
   */
  molarFactors: Map<CanonicalField, Map<number, number>>;
  errors: Flag[];
  notes: Note[];
}

const NUMERIC_CHECKS: Partial<Record<CanonicalField, { test: (x: number) => boolean; want: string }>> = {
  sample_volume: { test: (x) => x > 0, want: 'a volume above 0' },
  solvent_volume: { test: (x) => x > 0, want: 'a volume above 0' },
  final_volume: { test: (x) => x > 0, want: 'a volume above 0' },
  extractions: { test: (x) => Number.isInteger(x) && x >= 1, want: 'a whole number of extractions, 1 or more' },
  dilution: { test: (x) => x >= 1, want: 'a dilution factor of 1 or more' },
  partition_coeff: { test: (x) => x > 0, want: 'a partition coefficient above 0' },
  ph: { test: (x) => x >= 0 && x <= 14, want: 'a pH from 0 to 14' },
  spike_conc: { test: (x) => x >= 0, want: 'a spike concentration of 0 or more' },
  reporting_limit: { test: (x) => x >= 0, want: 'a reporting limit of 0 or more' },
  istd_response: { test: (x) => x >= 0, want: 'an internal-standard response of 0 or more' },
};

/** Build the work table: parse, convert, fill defaults, and record row errors as data. */
export function buildTable(raw: RawTable, map: ColumnMap, method: Method): WorkTable {
  const n = raw.rowCount;
  const errors: Flag[] = [];
  const notes: Note[] = [];
  const rowError = new Uint8Array(n);
  // Set once the sample types are read: a carried row (a calibrator) is never judged, so never an input error.
  let isCarried = (_row: number) => false;
  const fail = (row: number, column: string | undefined, reason: string, value?: string) => {
    if (isCarried(row)) return;
    const shown = value === undefined ? reason : `${reason}, got "${value}"`;
    errors.push({ row, code: 'INPUT_ERROR', column, message: rowMessage(raw.rowNumbers[row]!, column, shown), value });
    rowError[row] = 1;
  };
  // A reader's message already names its row (and column): kept as written, not prefixed again.
  for (const p of raw.rowProblems) {
    errors.push({ row: p.row, code: 'INPUT_ERROR', column: p.column, message: p.message });
    rowError[p.row] = 1;
  }

  const texts = new Map<string, string[]>();
  const readText = (field: CanonicalField): string[] => {
    const src = map.fields.get(field);
    const out = new Array<string>(n);
    const fallback = method.fields.get(field)?.default;
    for (let r = 0; r < n; r++) {
      const t = src ? cellText(raw.columns[src.column]![r] ?? null).trim() : '';
      out[r] = t === '' && fallback !== undefined ? String(fallback) : t;
    }
    texts.set(field, out);
    return out;
  };
  for (const spec of FIELD_SPECS.values()) if (spec.kind === 'text') readText(spec.name);

  // Sample types through the lab's codes.
  const sampleType = new Array<SampleType | ''>(n);
  const typeText = texts.get('sample_type')!;
  const typeSrc = map.fields.get('sample_type');
  for (let r = 0; r < n; r++) {
    const code = typeText[r]!.toLowerCase();
    const t = code === '' ? 'sample' : (method.sampleTypes.get(code) ?? (SAMPLE_TYPES as readonly string[]).find((s) => s === code));
    if (t === undefined) {
      sampleType[r] = '';
      const known = [...new Set([...method.sampleTypes.keys(), ...SAMPLE_TYPES])].join(', ');
      fail(r, typeSrc?.header, `expected a sample type (${known})`, typeText[r]);
    } else {
      sampleType[r] = t as SampleType;
    }
  }
  // Canonical type text for formulas (sample_type == "ms").
  texts.set('sample_type', sampleType.map((t) => t));

  // A type code that carries a QC level ("QC Low": { type: qc, level: low }) gives the row its level;
  // a qc_level cell that says another level is an input error naming both.
  if (method.sampleTypeLevels.size > 0) {
    const levels = texts.get('qc_level')!;
    const levelHeader = map.fields.get('qc_level')?.header ?? 'qc_level';
    for (let r = 0; r < n; r++) {
      const fromCode = method.sampleTypeLevels.get(typeText[r]!.toLowerCase());
      if (fromCode === undefined) continue;
      const cell = levels[r]!;
      if (cell === '' || cell.toLowerCase() === fromCode) levels[r] = fromCode;
      else fail(r, levelHeader, `expected the level its type code "${typeText[r]}" carries (${fromCode}) or an empty cell`, cell);
    }
  }
  // Calibrators and the like are carried: in every output as written, never computed or judged.
  const carried = new Uint8Array(n);
  for (let r = 0; r < n; r++) if (sampleType[r] === 'calibrator') carried[r] = 1;
  isCarried = (row) => carried[row] === 1;

  // Analytes through the method's names and aliases.
  const analyteKey = new Map<string, number>();
  method.analytes.forEach((a, i) => {
    for (const name of [a.name, ...a.aliases]) analyteKey.set(name.trim().toLowerCase(), i);
  });
  const analyteText = texts.get('analyte')!;
  const analyteIndex = new Int32Array(n);
  for (let r = 0; r < n; r++) analyteIndex[r] = analyteKey.get(analyteText[r]!.toLowerCase()) ?? -1;
  // Analytes are reported under the method's name where known.
  texts.set(
    'analyte',
    analyteText.map((t, r) => (analyteIndex[r]! >= 0 ? method.analytes[analyteIndex[r]!]!.name : t)),
  );

  for (const field of ['sample_id', 'analyte'] as const) {
    const col = texts.get(field)!;
    const header = map.fields.get(field)?.header ?? field;
    for (let r = 0; r < n; r++) if (col[r] === '') fail(r, header, `expected ${field === 'sample_id' ? 'a sample id' : 'an analyte name'}, got an empty cell`);
  }

  // One number format for the whole file (number-format.ts), from the text cells of every numeric field;
  // the result column's non-detect words are not numbers, the number of a "< 0,5" is.
  const nonDetects = new NonDetectReader(method.nonDetects);
  const numberFormat = raw.format.numberFormat ?? decideFormat(numericTexts(raw, map, nonDetects), { declared: method.numberFormat, delimiter: raw.format.delimiter });
  const nondetect = new Uint8Array(n);
  const nondetectLimit = new Float64Array(n).fill(NaN);

  // Numeric fields.
  const numbers = new Map<string, Float64Array>();
  const sources = new Map<string, Uint8Array>();
  const molarFactors = new Map<CanonicalField, Map<number, number>>();
  for (const spec of FIELD_SPECS.values()) {
    if (spec.kind !== 'number') continue;
    const values = new Float64Array(n).fill(NaN);
    const source = new Uint8Array(n).fill(ValueSource.Empty);
    const src = map.fields.get(spec.name);
    if (src) {
      const results = spec.name === 'extract_conc' ? { reader: nonDetects, rows: nondetect, limits: nondetectLimit, flags: errors } : undefined;
      const factors = readNumbers(raw, src, values, source, { analyteIndex, method, fail, numberFormat, nonDetects: results });
      if (factors.size > 0) molarFactors.set(spec.name, factors);
    }
    numbers.set(spec.name, values);
    sources.set(spec.name, source);
  }

  // Empty numeric cells filled by each field's chain (domain/fallbacks.ts: the workbook's as-used
  // formulas follow the same chain), then per-row checks that need several fields.
  const get = (f: CanonicalField) => numbers.get(f)!;
  fillFallbacks({ n, numbers, sources, analyteIndex, method });
  const cols = {
    k: get('partition_coeff'),
    pka: get('pka'),
    ph: get('ph'),
  };
  const spikes = get('spike_conc');
  const required = (['extract_conc', 'sample_volume', 'solvent_volume'] as const).map((f) => [f, get(f)] as const);
  const headerOf = (f: CanonicalField) => map.fields.get(f)?.header ?? f;
  const acid = texts.get('acid_base')!;
  const acidCanon = new Array<string>(n);
  const abSrc = map.fields.get('acid_base');
  for (let r = 0; r < n; r++) {
    const a: AnalyteInfo | undefined = analyteIndex[r]! >= 0 ? method.analytes[analyteIndex[r]!] : undefined;
    let ab: AcidBase | undefined = parseAcidBase(acid[r]!);
    if (ab === undefined) {
      fail(r, abSrc?.header ?? 'acid_base', 'expected acid, base or neutral', acid[r]);
      ab = 'neutral';
    } else if (acid[r] === '' && a?.acid_base) {
      ab = a.acid_base;
    }
    acidCanon[r] = ab;
    if (rowError[r] || carried[r]) continue;
    if (ab !== 'neutral' && !Number.isNaN(cols.k[r]!)) {
      if (Number.isNaN(cols.ph[r]!)) fail(r, headerOf('ph'), `expected a pH for an ionisable analyte (${ab})`);
      else if (Number.isNaN(cols.pka[r]!)) fail(r, headerOf('pka'), `expected a pKa for an ionisable analyte (${ab})`);
    }
    for (const [f, values] of required) {
      // A non-detect is a result: its concentration is empty on purpose.
      if (Number.isNaN(values[r]!) && !(f === 'extract_conc' && nondetect[r])) fail(r, headerOf(f), `expected a value for ${f}, got an empty cell`);
    }
    const type = sampleType[r];
    if (!rowError[r] && (type === 'lcs' || type === 'lcsd' || type === 'ms' || type === 'msd' || type === 'qc' || type === 'mdl')) {
      // A spiked control without its spike cannot be judged: it must not pass silently.
      const spike = spikes[r]!;
      if (!(spike > 0)) {
        const header = headerOf('spike_conc');
        const want = `expected a spike concentration above 0 for ${type === 'qc' ? 'a' : 'an'} ${type} row`;
        if (Number.isNaN(spike)) fail(r, header, `${want}, got an empty cell`);
        else fail(r, header, want, String(spike));
      }
    }
    if (!rowError[r] && Number.isNaN(cols.k[r]!)) {
      notes.push({ row: r, column: 'extraction_efficiency_pct', message: 'no partition coefficient: extraction efficiency taken as 100 %' });
    }
  }
  texts.set('acid_base', acidCanon);

  return { rowCount: n, numbers, texts, sources, sampleType, analyteIndex, rowError, carried, numberFormat, nondetect, nondetectLimit, molarFactors, errors: sortByRow(errors), notes };
}

/**
 * Fill every empty numeric cell by its field's chain (domain/fallbacks.ts), in FILL_ORDER so that a
 * product reads factors already filled; a filled cell's source is ValueSource.Default.
 */
function fillFallbacks(t: { n: number; numbers: Map<string, Float64Array>; sources: Map<string, Uint8Array>; analyteIndex: Int32Array; method: Method }): void {
  const { n, numbers, sources, analyteIndex, method } = t;
  const logK = numbers.get('log_k')!;
  for (const field of FILL_ORDER) {
    const values = numbers.get(field)!;
    const source = sources.get(field)!;
    const chain = fallbacksOf(field);
    // Each step as a per-row value (NaN: nothing here, try the next).
    const steps = chain.map((step): ((r: number) => number) | undefined => {
      switch (step.kind) {
        case 'ten-to-log-k':
          return (r) => 10 ** logK[r]!;
        case 'analyte': {
          const byAnalyte = method.analytes.map((a) => a[step.key] ?? NaN);
          if (byAnalyte.every(Number.isNaN)) return undefined;
          return (r) => (analyteIndex[r]! >= 0 ? byAnalyte[analyteIndex[r]!]! : NaN);
        }
        case 'method-reporting-limit': {
          const v = method.defaults.reporting_limit;
          return v === undefined ? undefined : () => v;
        }
        case 'field-default': {
          const v = numberDefault(method, field) ?? step.otherwise;
          return v === undefined ? undefined : () => v;
        }
        case 'product': {
          const [a, b] = [numbers.get(step.of[0])!, numbers.get(step.of[1])!];
          return (r) => a[r]! * b[r]!;
        }
      }
    }).filter((f): f is (r: number) => number => f !== undefined);
    if (steps.length === 0) continue;
    for (let r = 0; r < n; r++) {
      if (!Number.isNaN(values[r]!)) continue;
      for (const step of steps) {
        const v = step(r);
        if (Number.isNaN(v)) continue;
        values[r] = v;
        source[r] = ValueSource.Default;
        break;
      }
    }
  }
}

function numberDefault(method: Method, field: CanonicalField): number | undefined {
  const d = method.fields.get(field)?.default;
  return typeof d === 'number' ? d : undefined;
}

function readNumbers(
  raw: RawTable,
  src: FieldSource,
  values: Float64Array,
  source: Uint8Array,
  ctx: {
    analyteIndex: Int32Array;
    method: Method;
    fail: (row: number, column: string | undefined, reason: string, value?: string) => void;
    numberFormat: NumberFormat;
    /** For the result column: the non-detect words, and where to mark them. */
    nonDetects?: { reader: NonDetectReader; rows: Uint8Array; limits: Float64Array; flags: Flag[] };
  },
): Map<number, number> {
  const cells = raw.columns[src.column]!;
  const check = NUMERIC_CHECKS[src.field];
  const perAnalyte = new Map<number, number | string>();
  const factorFor = (r: number): number | string => {
    if (src.factor !== undefined) return src.factor;
    const ai = ctx.analyteIndex[r]!;
    const cached = perAnalyte.get(ai);
    if (cached !== undefined) return cached;
    const molarMass = ai >= 0 ? ctx.method.analytes[ai]!.molar_mass : undefined;
    let f: number | string;
    try {
      f = molarMass ? conversionFactor(src.fromUnit, src.toUnit, { molarMass }) : `converting ${src.fromUnit} to ${src.toUnit} needs the analyte's molar mass in the method`;
    } catch (err) {
      f = (err as Error).message;
    }
    perAnalyte.set(ai, f);
    return f;
  };
  // A worklist repeats most numbers (volumes, K, pH): each distinct text is parsed once.
  const parsedText = new Map<string, NumberCell>();
  let cacheOn = true;
  let misses = 0;
  const nd = ctx.nonDetects;
  for (let r = 0; r < raw.rowCount; r++) {
    const cell = cells[r] ?? null;
    if (nd && typeof cell === 'string') {
      const found = nd.reader.read(cell, ctx.numberFormat);
      if (found) {
        nd.rows[r] = 1;
        const factor = found.limit === undefined ? undefined : factorFor(r);
        if (typeof factor === 'number') nd.limits[r] = found.limit! * factor;
        const limit = found.limit === undefined ? '' : `, below its stated limit of ${found.limit} ${src.fromUnit}`.trimEnd();
        // A flag of its own that informs: it fails nothing and raises no exit code (QC judges the row).
        nd.flags.push({
          row: r,
          code: 'NOT_DETECTED',
          column: src.header,
          value: cell.trim(),
          ...(found.limit === undefined ? {} : { limit: found.limit }),
          message: rowMessage(raw.rowNumbers[r]!, src.header, `"${cell.trim()}" is read as not detected${limit}`),
        });
        continue;
      }
    }
    let parsed: NumberCell | undefined;
    if (cacheOn && typeof cell === 'string') {
      parsed = parsedText.get(cell);
      if (parsed === undefined) {
        parsed = parseNumberCell(cell, ctx.numberFormat);
        parsedText.set(cell, parsed);
        // A column of mostly distinct values (results) gains nothing: stop looking up.
        if (++misses > 1024 && misses > (r + 1) / 2) cacheOn = false;
      }
    } else parsed = parseNumberCell(cell, ctx.numberFormat);
    if (!parsed.ok) {
      ctx.fail(r, src.header, parsed.reason, cellText(cell));
      continue;
    }
    if (Number.isNaN(parsed.value)) continue;
    // Checks apply to the value as written (before conversion, sign and zero do not change).
    if (check && !check.test(parsed.value)) {
      ctx.fail(r, src.header, `expected ${check.want}`, cellText(cell).trim());
      continue;
    }
    const factor = factorFor(r);
    if (typeof factor === 'string') {
      ctx.fail(r, src.header, factor);
      continue;
    }
    values[r] = parsed.value * factor;
    source[r] = ValueSource.Worklist;
  }
  // The factors used through a molar mass, by analyte (src.factor covers every other conversion).
  const used = new Map<number, number>();
  for (const [ai, f] of perAnalyte) if (typeof f === 'number') used.set(ai, f);
  return used;
}

function sortByRow<T extends { row: number }>(xs: T[]): T[] {
  return xs.sort((a, b) => a.row - b.row);
}

/** The text cells of every numeric field, for deciding the number format (the number of a "< 0,5" included). */
function* numericTexts(raw: RawTable, map: ColumnMap, nonDetects: NonDetectReader): Iterable<string> {
  for (const src of map.fields.values()) {
    if (FIELD_SPECS.get(src.field)?.kind !== 'number') continue;
    const cells = raw.columns[src.column]!;
    const result = src.field === 'extract_conc';
    for (let r = 0; r < raw.rowCount; r++) {
      const cell = cells[r];
      if (typeof cell !== 'string' || cell === '') continue;
      if (result) {
        const part = NonDetectReader.numberPart(cell);
        if (part !== undefined) {
          yield part;
          continue;
        }
        if (nonDetects.isWord(cell)) continue;
      }
      yield cell;
    }
  }
}
