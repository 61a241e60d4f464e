/**
 * phasebook's library API (STYLE.md habit 8): recalculate a worklist, load a
 * method, write the outputs. Everything else is internal.
 */
export { recalculate, recalculateTable } from './pipeline.js';
export { recalculateData } from './memory.js';
export type { DataOptions, WorklistData, Cell } from './memory.js';
export type { RecalcOptions, RecalcResult, WorklistInfo } from './pipeline.js';
export type { OnProgress, ProgressEvent } from './progress.js';
export { loadMethod, parseMethod } from './method/load.js';
export type { Method, FormulaDef, AnalyteInfo, LimitSet, LimitTable } from './domain/method.js';
export { writeOutputs, outputPaths } from './outputs.js';
export type { WriteOptions, OutputKind } from './outputs.js';
export { StopError } from './errors.js';
export type { StopKind, StopLocation } from './errors.js';
export type { Flag, FlagCode, Note, ResultFlag, ResultNote, SpreadsheetRow } from './issues.js';
export { FLAG_CODES } from './issues.js';
export type { QcResult, QcStatus } from './qc/assess.js';
export type { GroupSummary, Verdict } from './summary/summarize.js';
export { VERSION } from './version.js';
