/**
 * Print settings of every sheet (src/write/workbook/print.ts), as the workbook's XML holds them
 * (ECMA-376 Part 1: §18.3.1.63 pageSetup, §18.3.1.46 headerFooter, §18.2.5 definedName
 * "_xlnm.Print_Titles"): fitted to one page wide, landscape when wide, header rows repeated,
 * the worklist's name and page numbers in the footer. Print settings are not content: the
 * workbook still verifies (tests/verify).
 */
import { rmSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import { printSettings } from '../../src/write/workbook/print.js';
import { SAMPLE_CASES, tempDir, unzipParts, writeCase } from '../verify/workbook-fixtures.js';

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
