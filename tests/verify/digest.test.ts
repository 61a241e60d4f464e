/**
 * The integrity digest as its description says (digest.ts, DIGEST_DESCRIPTION), computed here
 * independently of the writer and of verify: from the cells exceljs reads back, with node's
 * SHA-256. If the writer and the description ever part ways, this fails.
 */
import { createHash } from 'node:crypto';
import { rmSync } from 'node:fs';
import type ExcelJS from 'exceljs';
import { afterAll, describe, expect, it } from 'vitest';
import { resultsLayout } from '../../src/write/workbook/results-sheet.js';
import { SAMPLE_CASES, plain, readBook, rowWith, tempDir, valueByKey, writeCase } from './workbook-fixtures.js';

const dir = tempDir('phasebook-digest-');
afterAll(() => rmSync(dir, { recursive: true, force: true }));

type Cell = string | number | null;

function cellsOf(ws: ExcelJS.Worksheet, row: number, width: number): Cell[] {
  return Array.from({ length: width }, (_, i) => {
    const v = plain(ws.getRow(row).getCell(i + 1));
    return v === '' ? null : v;
  });
}

describe('the integrity digest', () => {
  it.each(SAMPLE_CASES.map((c) => [c.name, c] as const))('of %s follows its description', async (_name, c) => {
    const { path, result } = await writeCase(c, dir);
    const wb = await readBook(path);
    const width = resultsLayout(result).columns.length;
    const lines: string[] = ['phasebook integrity digest 3'];
    // Numbers to 15 significant digits; a formula cell as {"f":1}, never its cached result.
    const at15 = (v: Cell) => (typeof v === 'number' ? Number(v.toPrecision(15)) : v);

    const results = wb.getWorksheet('Results')!;
    let formulas = 0;
    for (let r = 1; r <= results.rowCount; r++) {
      const values = cellsOf(results, r, width).map((v, i) => {
        const cell = results.getRow(r).getCell(i + 1);
        if (cell.formula) {
          formulas++;
          return '{"f":1}';
        }
        return JSON.stringify(at15(v));
      });
      lines.push(`[${values.join(',')}]`);
    }
    expect(formulas).toBeGreaterThan(100);

    const method = wb.getWorksheet('Method')!;
    const ends = String(valueByKey(method, 'line ends of the method file') ?? 'LF');
    const eol = ({ LF: '\n', CRLF: '\r\n', CR: '\r' } as Record<string, string>)[ends] ?? '\n';
    const text: string[] = [];
    for (let r = rowWith(method, 'Method file text') + 2; typeof plain(method.getRow(r).getCell(1)) === 'number'; r++) {
      text.push(String(plain(method.getRow(r).getCell(2)) ?? ''));
    }
    lines.push(`method ${createHash('sha256').update(text.join(eol), 'utf8').digest('hex')}`);
    for (const title of ['Acceptance limits', 'In-house recovery limits applied (from the QC history)']) {
      const at = rowWith(method, title);
      if (at === 0) continue;
      for (let r = at + 2; method.getRow(r).cellCount > 0 && plain(method.getRow(r).getCell(1)) !== null; r++) {
        lines.push(JSON.stringify(cellsOf(method, r, title === 'Acceptance limits' ? 7 : 6).map(at15)));
      }
    }

    const trends = wb.getWorksheet('Trends')!;
    lines.push('trends');
    lines.push(JSON.stringify(['QC history', valueByKey(trends, 'QC history')]));
    lines.push(JSON.stringify(['points needed for limits', valueByKey(trends, 'points needed for limits')]));

    const expected = createHash('sha256').update(lines.map((l) => `${l}\n`).join(''), 'utf8').digest('hex');
    expect(valueByKey(wb.getWorksheet('Provenance')!, 'integrity digest (SHA-256)')).toBe(expected);
  });
});
