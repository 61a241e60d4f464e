/**
 * The workbook-wide parts an XLSX sheet needs to be read (ECMA-376 Part 1,
 * SpreadsheetML): the sheet list and date system (workbook.xml and its
 * relationships), which cell styles show dates (styles.xml), and the shared
 * strings (sharedStrings.xml), kept as UTF-8 in one buffer so that their
 * memory follows the part's size, not the number of JavaScript strings.
 */
import { StopError } from '../errors.js';
import { prefixedAttribute, readRelationships, type XlsxPackage } from './xlsx-package.js';

export interface SheetRef {
  name: string;
  /** The worksheet part, or undefined when the relationship is missing or not a worksheet (a chart sheet). */
  part: string | undefined;
}

export interface WorkbookInfo {
  sheets: SheetRef[];
  /** The 1904 date system (workbookPr date1904): serial 0 is 1904-01-01. */
  date1904: boolean;
  stylesPart: string | undefined;
  sharedStringsPart: string | undefined;
}

export async function readWorkbookInfo(pkg: XlsxPackage): Promise<WorkbookInfo> {
  const rootRels = await readRelationships(pkg, '');
  const workbookPart = rootRels.find((r) => r.type === 'officeDocument' && !r.external)?.part ?? 'xl/workbook.xml';
  if (!pkg.has(workbookPart)) throw pkg.damaged('it has no workbook part (xl/workbook.xml)');
  const rels = await readRelationships(pkg, workbookPart);
  const byId = new Map(rels.map((r) => [r.id, r]));

  const sheets: SheetRef[] = [];
  let date1904 = false;
  await pkg.parse(workbookPart, {
    open(name, a) {
      if (name === 'sheet') {
        const id = prefixedAttribute(a, 'id');
        const rel = id === undefined ? undefined : byId.get(id);
        sheets.push({ name: a.name ?? '', part: rel && rel.type === 'worksheet' && !rel.external ? rel.part : undefined });
      } else if (name === 'workbookPr') {
        date1904 = a.date1904 === '1' || a.date1904 === 'true';
      }
    },
    close() {},
    text() {},
  });
  const find = (type: string) => {
    const rel = rels.find((r) => r.type === type && !r.external);
    return rel && pkg.has(rel.part) ? rel.part : undefined;
  };
  return { sheets, date1904, stylesPart: find('styles'), sharedStringsPart: find('sharedStrings') };
}

/**
 * Built-in number formats that show a date or time (ECMA-376 Part 1, §18.8.30:
 * 14–22 and 45–47). Ids 27–36 and 50–58 are dates only in East Asian builds
 * and come with their format code written out when a workbook uses them.
 */
const BUILTIN_DATE_FORMATS = new Set([14, 15, 16, 17, 18, 19, 20, 21, 22, 45, 46, 47]);

/** True when a custom number format code shows a date or time: d, m, y, h or s outside quotes, brackets and escapes. */
export function isDateFormatCode(code: string): boolean {
  const bare = code
    .replace(/"[^"]*"/g, '') // quoted text
    .replace(/\[[^\]]*\]/g, '') // colours, conditions, locales, elapsed time
    .replace(/\\./g, '') // an escaped character
    .replace(/[_*]./g, ''); // padding and repeat characters
  return /[dmyhs]/i.test(bare) && !/^general$/i.test(bare.trim());
}

/** For each cell style index (the `s` of a cell), whether it shows a date. */
export async function readDateStyles(pkg: XlsxPackage, part: string | undefined): Promise<boolean[]> {
  if (part === undefined) return [];
  const codes = new Map<number, string>();
  const xfFormats: number[] = [];
  let inCellXfs = false;
  await pkg.parse(part, {
    open(name, a, selfClosing) {
      if (name === 'numFmt' && a.numFmtId !== undefined) codes.set(Number(a.numFmtId), a.formatCode ?? '');
      else if (name === 'cellXfs') inCellXfs = !selfClosing;
      else if (name === 'xf' && inCellXfs) xfFormats.push(Number(a.numFmtId ?? 0));
    },
    close(name) {
      if (name === 'cellXfs') inCellXfs = false;
    },
    text() {},
  });
  return xfFormats.map((id) => {
    const code = codes.get(id);
    return code === undefined ? BUILTIN_DATE_FORMATS.has(id) : isDateFormatCode(code);
  });
}

/**
 * The shared strings, as UTF-8 bytes in one growing buffer with an offset per
 * string; a string is decoded when a cell asks for it, and kept then, so each
 * is made once however many cells use it.
 */
export class SharedStrings {
  private bytes = Buffer.allocUnsafe(1 << 16);
  private used = 0;
  private ends = new Uint32Array(1 << 10);
  private decoded: (string | undefined)[] = [];
  count = 0;

  add(text: string): void {
    const need = Buffer.byteLength(text, 'utf8');
    if (this.used + need > this.bytes.length) {
      const grown = Buffer.allocUnsafe(Math.max(this.bytes.length * 2, this.used + need));
      this.bytes.copy(grown, 0, 0, this.used);
      this.bytes = grown;
    }
    this.used += this.bytes.write(text, this.used, 'utf8');
    if (this.count === this.ends.length) {
      const grown = new Uint32Array(this.ends.length * 2);
      grown.set(this.ends);
      this.ends = grown;
    }
    this.ends[this.count++] = this.used;
  }

  get(index: number): string {
    if (this.decoded.length !== this.count) this.decoded = new Array<string | undefined>(this.count);
    const seen = this.decoded[index];
    if (seen !== undefined) return seen;
    const start = index === 0 ? 0 : this.ends[index - 1]!;
    const text = this.bytes.toString('utf8', start, this.ends[index]!);
    this.decoded[index] = text;
    return text;
  }
}

/**
 * Read sharedStrings.xml: each `<si>` is one string, its `<t>` text, or the
 * `<t>` of its rich-text runs `<r>` joined; phonetic runs `<rPh>` are not
 * part of the text. `maxStrings` bounds the count (the caller's limit).
 */
export async function readSharedStrings(
  pkg: XlsxPackage,
  part: string,
  options: { maxStrings: number; tooMany: (max: number) => StopError },
): Promise<SharedStrings> {
  const strings = new SharedStrings();
  let inSi = false;
  let inT = false;
  let phonetic = 0;
  let text = '';
  await pkg.parse(part, {
    open(name, _a, selfClosing) {
      if (name === 'si') {
        if (strings.count >= options.maxStrings) throw options.tooMany(options.maxStrings);
        text = '';
        if (selfClosing) strings.add('');
        else inSi = true;
      } else if (name === 'rPh') phonetic++;
      else if (name === 't' && inSi && phonetic === 0 && !selfClosing) inT = true;
    },
    close(name) {
      if (name === 't') inT = false;
      else if (name === 'rPh') phonetic--;
      else if (name === 'si' && inSi) {
        strings.add(decodeEscapes(text));
        inSi = false;
      }
    },
    text(t) {
      if (inT) text += t;
    },
  });
  return strings;
}

/**
 * Undo the `_xHHHH_` escapes of an ST_Xstring (ECMA-376 Part 1, §22.9.2.19):
 * Excel writes a character XML cannot hold, such as a carriage return, as
 * "_x000D_", and a literal "_x" sequence as "_x005F_x…".
 */
export function decodeEscapes(text: string): string {
  if (!text.includes('_x')) return text;
  return text.replace(/_x([0-9A-Fa-f]{4})_/g, (_m, hex: string) => String.fromCharCode(parseInt(hex, 16)));
}

const MS_PER_DAY = 86_400_000;
/** Largest serial a spreadsheet shows as a date: 9999-12-31 in the 1900 system. */
const MAX_SERIAL = 2_958_465;

/**
 * A date serial as ISO 8601 text, the sheet's wall clock without a zone:
 * "2024-05-06", or "2024-05-06T13:30:00" when it has a time of day, or
 * "13:30:00" for a time alone (a serial below 1, in either system, as
 * openpyxl reads it). In the 1900 system, serial 1 is 1900-01-01 and serial
 * 60 the 1900-02-29 that Lotus 1-2-3 counted and Excel keeps for
 * compatibility (ECMA-376 Part 1, §18.17.4.1), so serials 1–59 count from
 * 1899-12-31, 61 and above from 1899-12-30, and 60 is refused. In the 1904
 * system serial 0 is 1904-01-01. Undefined for a serial that is no date.
 */
export function serialToIso(serial: number, date1904: boolean): string | undefined {
  if (!Number.isFinite(serial) || serial < 0 || serial > MAX_SERIAL) return undefined;
  let epoch: number;
  if (serial < 1) epoch = Date.UTC(1899, 11, 30); // a time alone: the date part is dropped below
  else if (date1904) epoch = Date.UTC(1904, 0, 1);
  else if (serial < 60) epoch = Date.UTC(1899, 11, 31);
  else if (serial < 61) return undefined;
  else epoch = Date.UTC(1899, 11, 30);
  const iso = new Date(epoch + Math.round(serial * MS_PER_DAY)).toISOString(); // YYYY-MM-DDTHH:MM:SS.sssZ
  const time = iso.endsWith('.000Z') ? iso.slice(11, 19) : iso.slice(11, 23);
  if (serial < 1) return time;
  return time === '00:00:00' ? iso.slice(0, 10) : `${iso.slice(0, 10)}T${time}`;
}

/**
 * An ISO 8601 date cell (t="d", ECMA-376 Part 1, §18.18.11 ST_CellType "d") as
 * the same text form as a date serial; undefined when it is not a valid date.
 * A zone designator "Z" is dropped (the sheet's wall clock); another offset is refused.
 */
export function isoCellText(text: string): string | undefined {
  const m = /^(\d{4})-(\d{2})-(\d{2})(?:T(\d{2}):(\d{2})(?::(\d{2})(\.\d{1,3})?)?Z?)?$/.exec(text.trim());
  if (!m) return undefined;
  const [, y, mo, d, h = '00', mi = '00', s = '00', frac = ''] = m;
  const ms = Date.UTC(Number(y), Number(mo) - 1, Number(d), Number(h), Number(mi), Number(s));
  const check = new Date(ms);
  if (check.getUTCFullYear() !== Number(y) || check.getUTCMonth() !== Number(mo) - 1 || check.getUTCDate() !== Number(d)) return undefined;
  if (Number(h) > 23 || Number(mi) > 59 || Number(s) > 59) return undefined;
  const date = `${y}-${mo}-${d}`;
  const millis = frac === '' ? 0 : Math.round(Number(`0${frac}`) * 1000);
  const time = `${h}:${mi}:${s}${millis === 0 ? '' : `.${String(millis).padStart(3, '0')}`}`;
  return time === '00:00:00' ? date : `${date}T${time}`;
}
