import { pushTo } from '../group.js';
import type { SampleType } from '../domain/fields.js';
import { significant } from '../format.js';
import { conversionFactor } from '../columns/units.js';
import type { Links } from '../engine/links.js';
import { rowMessage, type Flag, type FlagCode } from '../issues.js';
import type { AnalyteInfo, Method } from '../domain/method.js';
import { limitsFor, type AppliedLimits, type InHouseLimits } from './limits.js';

/** What QC reads: finished columns, nothing else (it never reaches back). */
export interface QcInput {
  method: Method;
  rowCount: number;
  rowNumbers: Int32Array;
  sampleType: readonly (SampleType | '')[];
  analyteIndex: Int32Array;
  texts: ReadonlyMap<string, readonly string[]>;
  numbers: ReadonlyMap<string, Float64Array>;
  computed: ReadonlyMap<string, Float64Array>;
  links: Links;
  rowError: Uint8Array;
  /** 1 where the result is a non-detect (columns/nondetect.ts): no concentration, judged as not detected. */
  nondetect?: Uint8Array;
  /** A non-detect's stated limit in the method's concentration unit, as measured in the extract (NaN when none). */
  nondetectLimit?: Float64Array;
  /** In-house limits from the QC history, used when the method asks for them. */
  inHouse?: InHouseLimits;
  /** The worklist's header of a canonical input field, for messages (a finding on "istd_response" names "IS Area"). */
  headerOf?: (field: string) => string | undefined;
  /** The absolute expanded uncertainty of each sample result (qc/uncertainty.ts; NaN where none), for "x ± U". */
  expandedUncertainty?: Float64Array;
}

/**
 * Everything a QC rule looks at, gathered once: the columns rules read by their
 * canonical names, the limits that judge each row, and a few look-ups.
 */
export interface QcContext {
  input: QcInput;
  method: Method;
  rowCount: number;
  type: readonly (SampleType | '')[];
  recovery: Float64Array;
  rpd: Float64Array;
  /** pre_extraction_conc, the row's result. */
  result: Float64Array;
  /** extract_conc as held by the engine (in the method's concentration unit). */
  extract: Float64Array;
  reportingLimit: Float64Array;
  /** 1 where the result is a non-detect. */
  nondetect: Uint8Array;
  batch: readonly string[];
  analyte: readonly string[];
  sampleId: readonly string[];
  parentId: readonly string[];
  qcLevel: readonly string[];
  limits: AppliedLimits[];
  analyteOf(row: number): AnalyteInfo | undefined;
  isSurrogate(row: number): boolean;
  /** Divide an engine extract_conc by this to get it in the extract unit (the calibration range's unit). */
  extractUnitFactor: number;
  /** istd_response as read (NaN when none). */
  istdResponse: Float64Array;
  /** Per row, the mean istd_response of its batch and analyte's reference rows (NaN when none). */
  istdReference: Float64Array;
}

/** A rule's finding on one row, before it becomes a Flag. */
export interface Finding {
  column?: string;
  text: string;
  value?: number | string;
  limit?: number | string;
}

const NaNColumn = (n: number) => new Float64Array(n).fill(NaN);
const emptyText = (n: number): readonly string[] => new Array<string>(n).fill('');

export function buildContext(input: QcInput): QcContext {
  const { method, rowCount: n } = input;
  const col = (name: string) => input.computed.get(name) ?? input.numbers.get(name) ?? NaNColumn(n);
  const text = (name: string) => input.texts.get(name) ?? emptyText(n);
  const analyteOf = (r: number): AnalyteInfo | undefined =>
    input.analyteIndex[r]! >= 0 ? method.analytes[input.analyteIndex[r]!] : undefined;
  const qcLevel = text('qc_level');
  const analyteNames = text('analyte');
  const limits: AppliedLimits[] = new Array(n);
  for (let r = 0; r < n; r++) {
    const type = input.sampleType[r];
    limits[r] = type ? limitsFor(method, { analyte: analyteOf(r), analyteName: analyteNames[r], sampleType: type, qcLevel: qcLevel[r]! }, input.inHouse) : { origin: 'none' };
  }
  return {
    input,
    method,
    rowCount: n,
    type: input.sampleType,
    recovery: col('spike_recovery_pct'),
    rpd: col('rpd_pct'),
    result: col('pre_extraction_conc'),
    extract: col('extract_conc'),
    nondetect: input.nondetect ?? new Uint8Array(input.rowCount),
    reportingLimit: col('reporting_limit'),
    batch: text('batch_id'),
    analyte: text('analyte'),
    sampleId: text('sample_id'),
    parentId: text('parent_id'),
    qcLevel,
    limits,
    analyteOf,
    isSurrogate: (r) => analyteOf(r)?.surrogate === true,
    // Calibration ranges are written in the extract unit; extract_conc is held in the sample unit (columns/map.ts).
    extractUnitFactor: conversionFactor(method.units.extract_concentration, method.units.concentration),
    istdResponse: col('istd_response'),
    istdReference: istdReference(input, col('istd_response'), text('batch_id'), analyteNames),
  };
}

/**
 * The reference an internal-standard response is compared with: the mean response of
 * the reference rows (calibrators and qc rows unless the method names others) of the
 * same batch and analyte, over those with a response and no input error.
 */
function istdReference(input: QcInput, response: Float64Array, batch: readonly string[], analyte: readonly string[]): Float64Array {
  const n = input.rowCount;
  const out = new Float64Array(n).fill(NaN);
  let any = false;
  for (let r = 0; r < n && !any; r++) any = Number.isFinite(response[r]!);
  if (!any) return out;
  const reference = new Set<string>(input.method.internalStandard.reference);
  const sums = new Map<string, { sum: number; n: number }>();
  const key = (r: number) => `${batch[r]}\u0000${analyte[r]}`;
  for (let r = 0; r < n; r++) {
    const t = input.sampleType[r]!;
    if (!reference.has(t) || input.rowError[r] || !Number.isFinite(response[r]!)) continue;
    const s = sums.get(key(r)) ?? { sum: 0, n: 0 };
    s.sum += response[r]!;
    s.n += 1;
    sums.set(key(r), s);
  }
  for (let r = 0; r < n; r++) {
    const s = sums.get(key(r));
    if (s) out[r] = s.sum / s.n;
  }
  return out;
}

export function toFlag(ctx: QcContext, row: number, code: FlagCode, f: Finding): Flag {
  return {
    row,
    code,
    column: f.column,
    // The message names the column as the worklist does; `column` stays the canonical name that marks the cell.
    message: rowMessage(ctx.input.rowNumbers[row]!, f.column === undefined ? undefined : (ctx.input.headerOf?.(f.column) ?? f.column), f.text),
    value: f.value,
    limit: f.limit,
  };
}

/** Numbers in messages: up to 6 significant figures (enough to see why 130.04 broke 130), no exponent for ordinary sizes. */
export function fmt(x: number): string {
  return significant(x, 6);
}

/** Key of a (batch, analyte) group. */
export function batchAnalyteKey(ctx: QcContext, row: number): string {
  return `${ctx.batch[row]}\u0000${ctx.analyte[row]}`;
}

/** The rows of one sample type, grouped by batch and analyte (batchAnalyteKey), in worklist order. */
export function rowsByBatchAnalyte(ctx: QcContext, type: string): Map<string, number[]> {
  const groups = new Map<string, number[]>();
  for (let r = 0; r < ctx.rowCount; r++) {
    if (ctx.type[r] !== type) continue;
    pushTo(groups, batchAnalyteKey(ctx, r), r);
  }
  return groups;
}
