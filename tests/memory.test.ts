import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Papa from 'papaparse';
import { afterAll, describe, expect, it } from 'vitest';
import { recalculate, recalculateData, writeOutputs } from '../src/index.js';
import { stopOf } from './helpers/stop.js';

const dir = mkdtempSync(join(tmpdir(), 'phasebook-memory-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const FILE = 'samples/kestrel-brook-2026-11.csv';
const METHOD = 'templates/surface-water.yaml';
const text = readFileSync(FILE, 'utf8');
const table = Papa.parse<string[]>(text, { skipEmptyLines: 'greedy' }).data;

describe('recalculateData (issue 18, point 4)', () => {
  it.each([
    ['CSV text', text],
    ['rows of arrays (the first the headers)', table],
    ['rows of objects', table.slice(1).map((r) => Object.fromEntries(table[0]!.map((h, i) => [h, r[i]])))],
    ['rows of objects with numbers as numbers', table.slice(1).map((r) => Object.fromEntries(table[0]!.map((h, i) => [h, r[i] !== '' && Number.isFinite(Number(r[i])) && i >= 5 ? Number(r[i]) : r[i]])))],
  ])('gives from %s the same results as from the file', async (_kind, data) => {
    const fromFile = await recalculate(FILE, { method: METHOD });
    const fromData = await recalculateData(data, { method: METHOD, name: 'kestrel' });
    expect(fromData.rowsIn).toBe(44);
    expect([...fromData.computed.get('pre_extraction_conc')!]).toEqual([...fromFile.computed.get('pre_extraction_conc')!]);
    expect(fromData.rowFlags).toEqual(fromFile.rowFlags);
    expect(fromData.verdict.headline).toEqual(fromFile.verdict.headline);
    expect(fromData.worklist.name).toBe('kestrel.csv');
  });

  it('names the outputs after the given name', async () => {
    const result = await recalculateData(text, { method: METHOD, name: 'kestrel-in-memory' });
    await writeOutputs(result, { outDir: dir, outputs: ['csv'] });
    expect(readdirSync(dir)).toEqual(['kestrel-in-memory.results.csv']);
  });

  it('names the worklist, not a temporary file, when it stops', async () => {
    const err = await stopOf(recalculateData([{ a: 1, b: 2 }], { method: METHOD }));
    expect(err.describe()).toBe('worklist.csv, row 1: missing the required column "sample_id" (or "Sample Name")');
  });
});

describe("a result's flags and notes carry the row a spreadsheet user counts (issue 18, point 4)", () => {
  // A blank line still counts as a row (README, "It accepts"), so spreadsheetRow is not row + 2 past it.
  const csv = [
    'sample_id,sample_type,analyte,extract_conc,sample_volume,solvent_volume',
    'W-01,sample,atrazine,12.5,100,10',
    '',
    'W-02,sample,atrazine,ten,100,10',
    'W-03,sample,atrazine,5,0,10',
  ].join('\n');

  it.each([
    // [0-based data row, spreadsheet row, column, message]: the message grammar of DEVELOPERS.md counts the header as row 1
    [1, 4, 'extract_conc', 'row 4, column "extract_conc": expected a number, got "ten"'],
    [2, 5, 'sample_volume', 'row 5, column "sample_volume": expected a volume above 0, got "0"'],
  ])('data row %i is spreadsheet row %i, as its message says', async (row, spreadsheetRow, column, message) => {
    const result = await recalculateData(csv, { method: 'templates/generic-lle.yaml' });
    const flag = result.flags.find((f) => f.row === row && f.code === 'INPUT_ERROR');
    expect(flag).toMatchObject({ row, spreadsheetRow, column, message });
  });

  it('gives every note its spreadsheet row too', async () => {
    const result = await recalculateData(csv, { method: 'templates/generic-lle.yaml' });
    expect(result.notes.length).toBeGreaterThan(0);
    for (const note of result.notes) expect(note.spreadsheetRow).toBe(result.raw.rowNumbers[note.row]);
    expect(result.notes.find((n) => n.row === 0)?.spreadsheetRow).toBe(2);
  });
});
