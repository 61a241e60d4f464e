export interface HandWrittenSheet {
  name: string;
  /** The content of `<sheetData>`. */
  xml?: string;
  /** The whole worksheet part instead. */
  part?: string;
  /** A part whose directory entry states a false size. */
  lying?: { packed: { bytes: Buffer; size: number; crc: number }; statedSize: number };
}

export interface HandWrittenWorkbookSpec {
  sheets: HandWrittenSheet[];
  /** Shared strings: plain text, or a whole `<si>…</si>` element. */
  sharedStrings?: string[];
  /** The content of `<styleSheet>` (numFmts, cellXfs). */
  styles?: string;
  date1904?: boolean;
  /** Relationship targets written from the package root ("/xl/worksheets/sheet1.xml"). */
  absoluteTargets?: boolean;
}

export function workbookEntries(spec: HandWrittenWorkbookSpec): { name: string; data?: Buffer }[];
export function handWrittenWorkbook(spec: HandWrittenWorkbookSpec): Buffer;
