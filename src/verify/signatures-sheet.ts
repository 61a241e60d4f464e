/**
 * Writing the Signatures sheet into a workbook without touching anything else:
 * every other part of the package is copied as it is, its compressed bytes
 * unchanged, so no cell, style or setting of the reviewer's program is lost.
 * The sheet is one worksheet part of our own (inline strings, so the shared
 * strings are not touched); a workbook that has none yet gets it listed in
 * xl/workbook.xml, its relationships and [Content_Types].xml.
 *
 * Zip layout per PKWARE APPNOTE.TXT §4.3 (local file header 4.3.7, central
 * directory header 4.3.12, end of central directory record 4.3.16); no ZIP64.
 */
import { open } from 'node:fs/promises';
import { crc32, deflateRawSync } from 'node:zlib';
import yauzl from 'yauzl';
import { StopError } from '../errors.js';
import { XlsxPackage, relsPartOf } from '../read/xlsx-package.js';
import { readWorkbookInfo } from '../read/xlsx-workbook.js';
import { escapeForXlsx, sheetText } from '../write/workbook/cells.js';
import { SIGNATURE_HEADERS, SIGNATURES_EXPLANATION, SIGNATURES_FORMAT, SIGNATURES_SHEET, SIGNATURES_TITLE, type SignatureRecord } from './signatures.js';

const MAIN_NS = 'http://schemas.openxmlformats.org/spreadsheetml/2006/main';
const REL_NS = 'http://schemas.openxmlformats.org/officeDocument/2006/relationships';
const WORKSHEET_REL = 'http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet';
const WORKSHEET_TYPE = 'application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml';
const ZIP64_LIMIT = 0xffff_ffff;

function xmlText(s: string): string {
  return escapeForXlsx(sheetText(s)).replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;');
}

function xmlAttribute(s: string): string {
  return xmlText(s).replace(/"/g, '&quot;');
}

/** The Signatures worksheet: a title, what is signed, the table header and one row per signature. */
export function signaturesSheetXml(records: readonly SignatureRecord[]): string {
  const rows: string[][] = [[SIGNATURES_TITLE, SIGNATURES_FORMAT], [SIGNATURES_EXPLANATION], [], [...SIGNATURE_HEADERS]];
  for (const s of records) rows.push([s.signer, s.time, s.fingerprint, s.publicKey, s.signature]);
  const letters = ['A', 'B', 'C', 'D', 'E'];
  const body = rows
    .map((cells, i) =>
      cells.length === 0
        ? ''
        : `<row r="${i + 1}">${cells
            .map((text, c) => `<c r="${letters[c]}${i + 1}" t="inlineStr"><is><t xml:space="preserve">${xmlText(text)}</t></is></c>`)
            .join('')}</row>`,
    )
    .join('');
  const widths = [30, 22, 66, 60, 90].map((w, i) => `<col min="${i + 1}" max="${i + 1}" width="${w}" customWidth="1"/>`).join('');
  return `<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n<worksheet xmlns="${MAIN_NS}"><cols>${widths}</cols><sheetData>${body}</sheetData></worksheet>`;
}

/**
 * Write to `target` a copy of the workbook `source` whose Signatures sheet lists `records`
 * (added as the last sheet when the workbook has none).
 */
export async function writeWithSignatures(source: string, target: string, records: readonly SignatureRecord[]): Promise<void> {
  const sheetXml = Buffer.from(signaturesSheetXml(records), 'utf8');
  const replaced = new Map<string, Buffer>();
  const pkg = await XlsxPackage.open(source);
  let added: string | undefined;
  try {
    const info = await readWorkbookInfo(pkg);
    const existing = info.sheets.find((s) => s.name === SIGNATURES_SHEET);
    if (existing?.part !== undefined) replaced.set(existing.part.toLowerCase(), sheetXml);
    else if (existing) throw new StopError('input', `its sheet "${SIGNATURES_SHEET}" is not a worksheet; expected the one phasebook sign writes`, { file: source });
    else {
      const workbookPart = await workbookPartOf(source);
      // Named as the writers name worksheets ("sheetN.xml"): some readers (exceljs) find sheets by that name only.
      let n = info.sheets.length + 1;
      while (pkg.has(`xl/worksheets/sheet${n}.xml`)) n++;
      const part = `xl/worksheets/sheet${n}.xml`;
      added = part;
      const read = async (name: string) => (await readPart(source, name)).toString('utf8');
      const relsPart = relsPartOf(workbookPart);
      const rels = await read(relsPart);
      let id = 'rIdPhasebookSignatures';
      for (let i = 2; rels.includes(`Id="${id}"`); i++) id = `rIdPhasebookSignatures${i}`;
      const workbook = await read(workbookPart);
      const ids = [...workbook.matchAll(/\bsheetId="(\d+)"/g)].map((m) => Number(m[1]));
      const sheetId = Math.max(0, ...ids) + 1;
      const relTarget = relativeTarget(workbookPart, part);
      replaced.set(
        workbookPart.toLowerCase(),
        insertBeforeClose(workbook, 'sheets', (p) => `<${p}sheet xmlns:r="${REL_NS}" name="${SIGNATURES_SHEET}" sheetId="${sheetId}" r:id="${id}"/>`, source),
      );
      replaced.set(
        relsPart.toLowerCase(),
        insertBeforeClose(rels, 'Relationships', (p) => `<${p}Relationship Id="${id}" Type="${WORKSHEET_REL}" Target="${xmlAttribute(relTarget)}"/>`, source),
      );
      const types = await read('[Content_Types].xml');
      replaced.set(
        '[content_types].xml',
        insertBeforeClose(types, 'Types', (p) => `<${p}Override PartName="/${xmlAttribute(part)}" ContentType="${WORKSHEET_TYPE}"/>`, source),
      );
    }
  } finally {
    pkg.close();
  }
  await copyZip(source, target, replaced, added === undefined ? undefined : { name: added, data: sheetXml });
}

/** `xl/workbook.xml` → `worksheets/x.xml` for a part in xl/worksheets. */
function relativeTarget(from: string, to: string): string {
  const base = from.split('/').slice(0, -1);
  const parts = to.split('/');
  let i = 0;
  while (i < base.length && i < parts.length - 1 && base[i] === parts[i]) i++;
  return [...base.slice(i).map(() => '..'), ...parts.slice(i)].join('/');
}

/** Insert markup before the closing tag of `element` (with whatever namespace prefix the file gives it). */
function insertBeforeClose(xml: string, element: string, markup: (prefix: string) => string, file: string): Buffer {
  const re = new RegExp(`</([A-Za-z_][\\w.-]*:)?${element}>`);
  const m = re.exec(xml);
  if (!m) {
    const selfClosed = new RegExp(`<([A-Za-z_][\\w.-]*:)?${element}(\\s[^>]*)?/>`).exec(xml);
    if (!selfClosed) throw new StopError('input', `is not a readable XLSX workbook: it has no <${element}> element where one is expected`, { file });
    const prefix = selfClosed[1] ?? '';
    const open = selfClosed[0].slice(0, -2) + '>';
    return Buffer.from(xml.slice(0, selfClosed.index) + open + markup(prefix) + `</${prefix}${element}>` + xml.slice(selfClosed.index + selfClosed[0].length), 'utf8');
  }
  return Buffer.from(xml.slice(0, m.index) + markup(m[1] ?? '') + xml.slice(m.index), 'utf8');
}

async function workbookPartOf(path: string): Promise<string> {
  const rels = (await readPart(path, '_rels/.rels')).toString('utf8');
  const m = /<(?:\w+:)?Relationship\b[^>]*Type="[^"]*\/officeDocument"[^>]*>/.exec(rels);
  const target = m ? /Target="([^"]+)"/.exec(m[0])?.[1] : undefined;
  return (target ?? 'xl/workbook.xml').replace(/^\/+/, '');
}

/** One part, unpacked. */
async function readPart(path: string, name: string): Promise<Buffer> {
  const zip = await yauzl.openPromise(path, { lazyEntries: true, autoClose: false, validateEntrySizes: true });
  try {
    for await (const entry of zip.eachEntry()) {
      if (entry.fileName.replace(/^\/+/, '').toLowerCase() !== name.toLowerCase()) continue;
      const stream = await zip.openReadStreamPromise(entry);
      const chunks: Buffer[] = [];
      for await (const chunk of stream) chunks.push(chunk as Buffer);
      return Buffer.concat(chunks);
    }
  } finally {
    zip.close();
  }
  throw new StopError('input', `is not a readable XLSX workbook: the part "${name}" is missing`, { file: path });
}

/** Copy the zip `source` to `target`, parts in `replaced` (by lower-case name) rewritten, `added` appended. */
async function copyZip(source: string, target: string, replaced: ReadonlyMap<string, Buffer>, added: { name: string; data: Buffer } | undefined): Promise<void> {
  const zip = await yauzl.openPromise(source, { lazyEntries: true, autoClose: false, validateEntrySizes: true });
  const out = await open(target, 'w');
  const central: Buffer[] = [];
  let offset = 0;
  const write = async (buf: Buffer) => {
    await out.write(buf);
    offset += buf.length;
  };
  const writeEntry = async (
    name: string,
    fields: { method: number; time: number; date: number; crc: number; compressed: number; size: number; attributes: number; flags: number },
    data: Buffer | AsyncIterable<Buffer>,
  ) => {
    if (fields.compressed >= ZIP64_LIMIT || fields.size >= ZIP64_LIMIT || offset >= ZIP64_LIMIT) {
      throw new StopError('input', 'is too large to sign: it needs ZIP64, which phasebook sign does not write', { file: source });
    }
    const nameBytes = Buffer.from(name, 'utf8');
    const local = Buffer.alloc(30);
    local.writeUInt32LE(0x04034b50, 0);
    local.writeUInt16LE(20, 4);
    local.writeUInt16LE(fields.flags, 6);
    local.writeUInt16LE(fields.method, 8);
    local.writeUInt16LE(fields.time, 10);
    local.writeUInt16LE(fields.date, 12);
    local.writeUInt32LE(fields.crc >>> 0, 14);
    local.writeUInt32LE(fields.compressed, 18);
    local.writeUInt32LE(fields.size, 22);
    local.writeUInt16LE(nameBytes.length, 26);
    local.writeUInt16LE(0, 28);
    const at = offset;
    await write(local);
    await write(nameBytes);
    if (Buffer.isBuffer(data)) await write(data);
    else for await (const chunk of data) await write(chunk);
    const c = Buffer.alloc(46);
    c.writeUInt32LE(0x02014b50, 0);
    c.writeUInt16LE(20, 4);
    c.writeUInt16LE(20, 6);
    c.writeUInt16LE(fields.flags, 8);
    c.writeUInt16LE(fields.method, 10);
    c.writeUInt16LE(fields.time, 12);
    c.writeUInt16LE(fields.date, 14);
    c.writeUInt32LE(fields.crc >>> 0, 16);
    c.writeUInt32LE(fields.compressed, 20);
    c.writeUInt32LE(fields.size, 24);
    c.writeUInt16LE(nameBytes.length, 28);
    c.writeUInt32LE(fields.attributes >>> 0, 38);
    c.writeUInt32LE(at, 42);
    central.push(c, nameBytes);
  };
  const fresh = (data: Buffer, time: number, date: number) => {
    const packed = deflateRawSync(data);
    return { fields: { method: 8, time, date, crc: crc32(data), compressed: packed.length, size: data.length, attributes: 0, flags: 0x0800 }, packed };
  };
  try {
    let count = 0;
    for await (const entry of zip.eachEntry()) {
      if (entry.generalPurposeBitFlag & 0x1) throw new StopError('input', 'is not a readable XLSX workbook: it holds encrypted parts', { file: source });
      const key = entry.fileName.replace(/^\/+/, '').toLowerCase();
      const replacement = replaced.get(key);
      if (replacement) {
        const { fields, packed } = fresh(replacement, entry.lastModFileTime, entry.lastModFileDate);
        await writeEntry(entry.fileName, fields, packed);
      } else {
        const raw = await zip.openReadStreamPromise(entry, { decompress: false });
        await writeEntry(
          entry.fileName,
          {
            method: entry.compressionMethod,
            time: entry.lastModFileTime,
            date: entry.lastModFileDate,
            crc: entry.crc32,
            compressed: entry.compressedSize,
            size: entry.uncompressedSize,
            attributes: entry.externalFileAttributes,
            flags: 0x0800 | (entry.generalPurposeBitFlag & 0x0006), // UTF-8 names; no data descriptor (sizes are in the header)
          },
          raw as AsyncIterable<Buffer>,
        );
      }
      count++;
    }
    if (added) {
      const { fields, packed } = fresh(added.data, 0, 0x21);
      await writeEntry(added.name, fields, packed);
      count++;
    }
    const directory = Buffer.concat(central);
    const end = Buffer.alloc(22);
    end.writeUInt32LE(0x06054b50, 0);
    end.writeUInt16LE(count, 8);
    end.writeUInt16LE(count, 10);
    end.writeUInt32LE(directory.length, 12);
    end.writeUInt32LE(offset, 16);
    await write(directory);
    await write(end);
    await out.sync();
  } finally {
    await out.close();
    zip.close();
  }
}
