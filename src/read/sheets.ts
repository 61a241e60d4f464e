/**
 * Words to add to a message about a sheet read by default (the first) when the
 * workbook has others: `; the workbook's sheets are "Notes", "Worklist" (choose
 * one with --sheet)`, or "" when it has one sheet.
 */
export function otherSheets(sheets: readonly string[] | undefined): string {
  if (sheets === undefined || sheets.length < 2) return '';
  return `; the workbook's sheets are ${sheets.map((n) => `"${n}"`).join(', ')} (choose one with --sheet)`;
}
