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
