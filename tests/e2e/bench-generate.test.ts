import Papa from 'papaparse';
import { describe, expect, it } from 'vitest';
// @ts-expect-error: the bench generator is plain JavaScript (bench/generate.mjs)
import { ANALYTES, HEADERS, ROWS_PER_BATCH, worklistLines } from '../../bench/generate.mjs';
import { CANONICAL_FIELDS } from '../../src/domain/fields.js';

function table(rows: number, seed?: number): Record<string, string>[] {
  const text = [...worklistLines(rows, { seed })].join('\n');
  return Papa.parse<Record<string, string>>(text, { header: true, skipEmptyLines: 'greedy' }).data;
}

describe('bench worklist generator (the invented scenario of issue 6)', () => {
  it.each([1, 103, 104, 105, 1000])('writes exactly %i data rows', (n) => {
    expect(table(n)).toHaveLength(n);
  });

  it('uses canonical headers (plus two free-text columns) and is the same for the same seed', () => {
    expect(HEADERS.filter((h: string) => !(CANONICAL_FIELDS as readonly string[]).includes(h))).toEqual(['instrument', 'note']);
    expect([...worklistLines(500)]).toEqual([...worklistLines(500)]);
    expect([...worklistLines(500, { seed: 7 })]).not.toEqual([...worklistLines(500)]);
  });

  it('a batch holds, per analyte, 20 samples, a blank, an lcs/lcsd pair, an ms/msd pair and a duplicate', () => {
    const rows = table(ROWS_PER_BATCH);
    expect(ROWS_PER_BATCH).toBe(26 * ANALYTES.length);
    for (const a of ANALYTES as Array<{ name: string }>) {
      const types = rows.filter((r) => r.analyte === a.name).map((r) => r.sample_type);
      const count = (t: string) => types.filter((x) => x === t).length;
      expect([count('sample'), count('blank'), count('lcs'), count('lcsd'), count('ms'), count('msd'), count('dup')]).toEqual([20, 1, 1, 1, 1, 1, 1]);
    }
    expect(new Set(rows.map((r) => r.batch_id)).size).toBe(1);
  });

  it('every parent comes before its control, and ionisable analytes carry pH and pKa', () => {
    const rows = table(3 * ROWS_PER_BATCH);
    const seen = new Set<string>();
    for (const r of rows) {
      if (r.parent_id) expect(seen.has(`${r.analyte}|${r.parent_id}`)).toBe(true);
      seen.add(`${r.analyte}|${r.sample_id}`);
      if (r.acid_base === 'acid' || r.acid_base === 'base') {
        expect(Number(r.ph)).toBeGreaterThan(0);
        expect(Number(r.pka)).toBeGreaterThan(0);
      }
    }
    expect(new Set(rows.map((r) => r.acid_base))).toEqual(new Set(['neutral', 'acid', 'base']));
  });
});
