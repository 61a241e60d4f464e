// Types for the two exceljs files the workbook writer imports on their own
// (src/write/workbook/write.ts says why): the same classes and values as the
// package's entry exports.
declare module 'exceljs/lib/stream/xlsx/workbook-writer.js' {
  import type ExcelJS from 'exceljs';
  const WorkbookWriter: typeof ExcelJS.stream.xlsx.WorkbookWriter;
  export default WorkbookWriter;
}

declare module 'exceljs/lib/doc/enums.js' {
  import type ExcelJS from 'exceljs';
  const enums: { ValueType: typeof ExcelJS.ValueType };
  export default enums;
}
