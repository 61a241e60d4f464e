/**
 * How each sheet prints: fitted to the page width (as many pages down as it takes),
 * landscape when the sheet is wider than a portrait page holds, its frozen header
 * rows repeated on every page, and a footer with the worklist's name and the page
 * number. Print settings are not content: verify never compares them.
 */
import type ExcelJS from 'exceljs';
import type { SheetPlan } from './cells.js';

/**
 * Column widths (in characters) that fit an A4 or Letter page in portrait at 100 % with the
 * default margins, about 90 (from memory); a wider sheet prints in landscape.
 */
export const PORTRAIT_WIDTH = 90;

/** A text in a header or footer: "&" starts a code there, so a literal one is written "&&". */
function footerText(s: string): string {
  return s.replaceAll('&', '&&');
}

export function printSettings(
  plan: SheetPlan,
  options: { title: string },
): { pageSetup: Partial<ExcelJS.PageSetup>; headerFooter: Partial<ExcelJS.HeaderFooter> } {
  const width = plan.widths.reduce((sum, w) => sum + w, 0);
  const headerRows = plan.frozen?.rows ?? 0;
  return {
    pageSetup: {
      orientation: width > PORTRAIT_WIDTH ? 'landscape' : 'portrait',
      fitToPage: true,
      fitToWidth: 1,
      fitToHeight: 0,
      ...(headerRows > 0 ? { printTitlesRow: `1:${headerRows}` } : {}),
    },
    // &L left, &C centre, &R right; &A the sheet's name, &P the page, &N the pages (ECMA-376 Part 1, §18.3.1.46).
    headerFooter: { oddFooter: `&L${footerText(options.title)}&C&A&RPage &P of &N` },
  };
}
