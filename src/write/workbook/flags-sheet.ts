/**
 * The Flags sheet: one row per flag (worklist row, the Results cell it marks,
 * sample, analyte, code, effect, reason, value, limit), then the engine's notes.
 * Planned lazily: a large worklist can carry many flags.
 */
import { FAILING_CODES, type Flag, type Note } from '../../issues.js';
import type { RecalcResult } from '../../pipeline.js';
import { cell, columnLetter, type PlannedCell, type PlannedRow, type SheetPlan } from './cells.js';
import { RESULTS_SHEET, targetColumnOf, type ResultsLayout } from './results-sheet.js';

export const FLAGS_SHEET = 'Flags';

export const FLAG_HEADERS = ['worklist row', 'cell', 'sample_id', 'analyte', 'code', 'effect', 'column', 'reason', 'value', 'limit'] as const;
export const NOTE_HEADERS = ['worklist row', 'cell', 'sample_id', 'column', 'note'] as const;

export function planFlagsSheet(result: RecalcResult, options: { layout: ResultsLayout }): SheetPlan {
  const { layout } = options;
  const flags: readonly Flag[] = result.flags;
  const notes: readonly Note[] = result.notes;
  const sampleId = result.table.texts.get('sample_id')!;
  const analyte = result.table.texts.get('analyte')!;
  const cellOf = (row: number, column: string | undefined) =>
    `${RESULTS_SHEET}!${columnLetter(targetColumnOf(result, layout, column))}${row + 2}`;
  const context = (row: number) => ({ worklistRow: result.raw.rowNumbers[row]!, sampleId: sampleId[row]! });

  const flagHeaders = [...FLAG_HEADERS];
  const noteHeaders = [...NOTE_HEADERS];
  // Rows: title, header, flags…, blank, title, header, notes…
  const flagsHeaderIndex = 1;
  const notesTitleIndex = flagsHeaderIndex + flags.length + 2;
  const rowCount = notesTitleIndex + 2 + notes.length;
  const header = (hs: readonly string[]): PlannedRow => ({ cells: hs.map((h) => cell(h, { style: 'header' })), labels: hs });

  const row = (i: number): PlannedRow => {
    if (i === 0) return { cells: [cell(`Flags: ${flags.length} on ${new Set(flags.map((f) => f.row)).size} rows`, { style: 'title' })] };
    if (i === flagsHeaderIndex) return header(flagHeaders);
    if (i < notesTitleIndex - 1) {
      const f = flags[i - flagsHeaderIndex - 1]!;
      const failing = f.code === 'INPUT_ERROR' || FAILING_CODES.has(f.code);
      const cells: PlannedCell[] = [
        cell(result.raw.rowNumbers[f.row]!),
        cell(cellOf(f.row, f.column)),
        cell(sampleId[f.row]! || null),
        cell(analyte[f.row]! || null),
        cell(f.code, { mark: failing ? 'fail' : 'inform' }),
        cell(f.code === 'INPUT_ERROR' ? 'input error' : failing ? 'fails' : 'informs'),
        cell(f.column ?? null),
        cell(f.message, { style: 'wrap' }),
        cell(f.value === undefined || (typeof f.value === 'number' && !Number.isFinite(f.value)) ? null : f.value),
        cell(f.limit === undefined ? null : f.limit),
      ];
      return { cells, labels: flagHeaders, context: context(f.row) };
    }
    if (i === notesTitleIndex - 1) return { cells: [] };
    if (i === notesTitleIndex) return { cells: [cell(`Notes: ${notes.length}`, { style: 'section' })] };
    if (i === notesTitleIndex + 1) return header(noteHeaders);
    const note = notes[i - notesTitleIndex - 2]!;
    return {
      cells: [
        cell(result.raw.rowNumbers[note.row]!),
        cell(cellOf(note.row, note.column)),
        cell(sampleId[note.row]! || null),
        cell(note.column ?? null),
        cell(note.message, { mark: 'note', style: 'wrap' }),
      ],
      labels: noteHeaders,
      context: context(note.row),
    };
  };

  return {
    name: FLAGS_SHEET,
    widths: [12, 14, 22, 20, 14, 12, 24, 70, 12, 12],
    frozen: { rows: 2 },
    autoFilter: { row: 2, columns: flagHeaders.length },
    rowCount,
    row,
  };
}
