/**
 * Print settings of every sheet (src/write/workbook/print.ts), as the workbook's XML holds them
 * (ECMA-376 Part 1: §18.3.1.63 pageSetup, §18.3.1.46 headerFooter, §18.2.5 definedName
 * "_xlnm.Print_Titles"): fitted to one page wide, landscape when wide, header rows repeated,
 * the worklist's name and page numbers in the footer. Print settings are not content: the
 * workbook still verifies (tests/verify).
 *
 * Also how the sheets read: wrapped text gets a row tall enough for its lines (§18.3.1.73 row: ht,
 * customHeight), and the Results sheet's worklist and as-used columns are outline groups (§18.3.1.13
 * col: outlineLevel, collapsed, hidden; §18.3.1.81 sheetFormatPr: outlineLevelCol), open as written.
 */
import { rmSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import { join } from 'node:path';
import { printSettings } from '../../src/write/workbook/print.js';
import { planWorkbook } from '../../src/write/workbook/workbook-plan.js';
import { writePlannedWorkbook } from '../../src/write/workbook/write.js';
import { resultsLayout } from '../../src/write/workbook/results-layout.js';
import { wrappedLines } from '../../src/write/workbook/style.js';
import { RUN, SAMPLE_CASES, recalcCase, tempDir, unzipParts, writeCase } from '../verify/workbook-fixtures.js';

const dir = tempDir('phasebook-print-');
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('print settings', () => {
  it('every sheet: one page wide, landscape when wide, a footer with the worklist and page numbers; header rows repeated', async () => {
    const { path } = await writeCase(SAMPLE_CASES[0]!, dir);
    const parts = await unzipParts(path);
    const sheets = [...parts.keys()].filter((name) => /^xl\/worksheets\/sheet\d+\.xml$/.test(name));
    expect(sheets).toHaveLength(7);
    for (const name of sheets) {
      const xml = parts.get(name)!.toString('utf8');
      expect(xml, name).toMatch(/<pageSetUpPr fitToPage="1"\/>/);
      expect(xml, name).toMatch(/<pageSetup [^>]*orientation="landscape"[^>]*fitToWidth="1" fitToHeight="0"/);
      expect(xml, name).toContain('<oddFooter>&amp;Lkestrel-brook-2026-11.csv&amp;C&amp;A&amp;RPage &amp;P of &amp;N</oddFooter>');
    }
    const workbook = parts.get('xl/workbook.xml')!.toString('utf8');
    expect(workbook).toContain('<definedName name="_xlnm.Print_Titles" localSheetId="1">&apos;Results&apos;!$1:$1</definedName>');
    expect(workbook).toContain('<definedName name="_xlnm.Print_Titles" localSheetId="2">&apos;QC&apos;!$1:$2</definedName>');
  });

  it.each([
    [[20, 30, 40], 'portrait'],
    [[30, 90, 40], 'landscape'],
  ] as const)('widths %j print %s', (widths, orientation) => {
    const plan = { name: 'S', widths, rowCount: 0, row: () => ({ cells: [] }) };
    expect(printSettings(plan, { title: 'run & co.csv' })).toEqual({
      pageSetup: { orientation, fitToPage: true, fitToWidth: 1, fitToHeight: 0 },
      headerFooter: { oddFooter: '&Lrun && co.csv&C&A&RPage &P of &N' },
    });
  });
});

/** The XML text of an inline string cell, decoded. */
const xmlText = (s: string): string => s.replace(/&lt;/g, '<').replace(/&gt;/g, '>').replace(/&quot;/g, '"').replace(/&apos;/g, "'").replace(/&amp;/g, '&');

/** 1-based column number of a cell reference's letters. */
const columnOf = (ref: string): number => [...ref.replace(/\d+$/, '')].reduce((n, ch) => n * 26 + ch.charCodeAt(0) - 64, 0);

/** A workbook of the kestrel sample written by either row writer, its parts unzipped. */
async function written(rowWriter: 'direct' | 'exceljs'): Promise<Map<string, Buffer>> {
  const result = await recalcCase(SAMPLE_CASES[0]!);
  const path = join(dir, `read-${rowWriter}.xlsx`);
  await writePlannedWorkbook(path, planWorkbook(result, { run: RUN }), { run: RUN, rowWriter });
  return unzipParts(path);
}

describe.each(['direct', 'exceljs'] as const)('how the sheets read (%s row writer)', (rowWriter) => {
  it('wrapped text never runs over the next row: a row whose wrapped cell holds more than one line is as tall as its lines', async () => {
    const parts = await written(rowWriter);
    const styles = parts.get('xl/styles.xml')!.toString('utf8');
    const xfs = /<cellXfs[^>]*>([\s\S]*?)<\/cellXfs>/.exec(styles)![1]!.match(/<xf\b[^>]*?(?:\/>|>[\s\S]*?<\/xf>)/g)!;
    const wrapping = new Set(xfs.flatMap((xf, i) => (/wrapText="1"/.test(xf) ? [i] : [])));
    expect(wrapping.size).toBeGreaterThan(0);
    let multiLine = 0;
    for (const name of [...parts.keys()].filter((n) => /^xl\/worksheets\/sheet\d+\.xml$/.test(n))) {
      const xml = parts.get(name)!.toString('utf8');
      const widths = new Map<number, number>();
      for (const m of xml.matchAll(/<col min="(\d+)" max="(\d+)" width="([\d.]+)"/g)) {
        for (let c = Number(m[1]); c <= Number(m[2]); c++) widths.set(c, Number(m[3]));
      }
      for (const row of xml.matchAll(/<row r="(\d+)"([^>]*)>([\s\S]*?)<\/row>/g)) {
        const [, r, attributes, cells] = row;
        let lines = 1;
        // A cell with content (not self-closing); its text in <is><t> (inline) or <v> (a "str" cell).
        for (const c of cells!.matchAll(/<c r="([A-Z]+\d+)" s="(\d+)"((?:\s+[\w:]+="[^"]*")*)>([\s\S]*?)<\/c>/g)) {
          if (!wrapping.has(Number(c[2]))) continue;
          const text = xmlText((c[4]!.match(/<([tv])\b[^>]*>[\s\S]*?<\/\1>/g) ?? []).map((t) => t.replace(/<[^>]+>/g, '')).join(''));
          // Lines by the text's own line breaks, and at least one more for a line longer than the column is wide.
          const width = widths.get(columnOf(c[1]!)) ?? 8.43;
          const least = text.split('\n').reduce((n, line) => n + (line.length > width ? 2 : 1), 0);
          lines = Math.max(lines, least);
        }
        if (lines === 1) continue;
        multiLine++;
        const height = /\bht="([\d.]+)"/.exec(attributes!)?.[1];
        expect(height, `${name} row ${r}: ${lines} lines`).toBeDefined();
        expect(Number(height), `${name} row ${r}`).toBeGreaterThanOrEqual(Math.min(409, lines * 15));
        expect(attributes, `${name} row ${r}`).toMatch(/customHeight="1"/);
      }
    }
    // The Summary's reasons, the Method sheet's formulas and the Provenance sheet's cautions, at least.
    expect(multiLine).toBeGreaterThan(5);
  });

  it('the Results sheet: the worklist columns and the as-used columns are outline groups of level 1, open; the sheet says its outline level', async () => {
    const parts = await written(rowWriter);
    const xml = parts.get('xl/worksheets/sheet2.xml')!.toString('utf8');
    expect(xml).toMatch(/<sheetFormatPr [^>]*outlineLevelCol="1"/);
    expect(xml).toContain('<outlinePr summaryBelow="1" summaryRight="0"/>');
    const levels: number[] = [];
    for (const m of xml.matchAll(/<col min="(\d+)" max="(\d+)"([^>]*)\/>/g)) {
      expect(m[3], `columns ${m[1]}-${m[2]}`).not.toMatch(/collapsed|hidden/);
      const level = Number(/outlineLevel="(\d+)"/.exec(m[3]!)?.[1] ?? 0);
      for (let c = Number(m[1]); c <= Number(m[2]); c++) levels[c - 1] = level;
    }
    const layout = resultsLayout(await recalcCase(SAMPLE_CASES[0]!));
    expect(levels).toEqual(layout.columns.map((c) => (c.kind === 'input' || c.kind === 'as-used' ? 1 : 0)));
    // kestrel: 13 worklist columns from F (samples/kestrel-brook-2026-11.csv's header), then the worklist row.
    expect(levels.slice(0, 19)).toEqual([0, 0, 0, 0, 0, ...Array(13).fill(1), 0]);
  });
});

describe('wrappedLines', () => {
  it.each([
    ['', 10, 1],
    ['short', 10, 1],
    ['two\nlines', 10, 2],
    // 9 characters a line in a column 10 wide (nine tenths): "one two" (7), then "three" (5).
    ['one two three', 10, 2],
    // A word of 20 characters in lines of 9: three lines.
    ['abcdefghijklmnopqrst', 10, 3],
    ['abcdefghijklmnopqrst end', 10, 3],
    ['a\n\nb', 40, 3],
  ])('%j in a column %d wide takes %d lines (counted by hand)', (text, width, lines) => {
    expect(wrappedLines(text, width)).toBe(lines);
  });
});
