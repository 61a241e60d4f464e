/**
 * Workbooks that the zip guard accepts (under 512 MiB unpacked, under 1000:1 per
 * part) but that are built to cost an XLSX reader memory or time, for
 * bench/xlsx-input.mjs --hostile. The sheet part is deflated with node:zlib and
 * zipped with tests/helpers/zip.mjs.
 */
import { createWriteStream } from 'node:fs';
import { once } from 'node:events';
import { join } from 'node:path';
import { deflateRawSync, crc32 } from 'node:zlib';
import { buildZip } from '../tests/helpers/zip.mjs';

const CT = `<?xml version="1.0" encoding="UTF-8"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/><Override PartName="/xl/worksheets/sheet1.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/></Types>`;
const RELS = `<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>`;
const WB = `<?xml version="1.0" encoding="UTF-8"?><workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets><sheet name="S" sheetId="1" r:id="rId1"/></sheets></workbook>`;
const WB_RELS = `<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet1.xml"/></Relationships>`;

/** A workbook of one sheet whose XML is `head` (text, or a list of buffers), `repeat` × `times`, `tail`. */
function workbook(head, repeat, times, tail) {
  const parts = [Buffer.from('<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>')];
  if (Array.isArray(head)) parts.push(...head);
  else parts.push(Buffer.from(head));
  const perBlock = Math.max(1, Math.floor(65536 / Math.max(1, repeat.length)));
  const block = Buffer.from(repeat.repeat(perBlock));
  let left = repeat === '' ? 0 : times;
  while (left >= perBlock) {
    parts.push(block);
    left -= perBlock;
  }
  if (left > 0 && repeat !== '') parts.push(Buffer.from(repeat.repeat(left)));
  parts.push(Buffer.from(`${tail}</sheetData></worksheet>`));
  const sheet = Buffer.concat(parts);
  const packed = deflateRawSync(sheet, { level: 9 });
  return buildZip([
    { name: '[Content_Types].xml', data: Buffer.from(CT) },
    { name: '_rels/.rels', data: Buffer.from(RELS) },
    { name: 'xl/workbook.xml', data: Buffer.from(WB) },
    { name: 'xl/_rels/workbook.xml.rels', data: Buffer.from(WB_RELS) },
    { name: 'xl/worksheets/sheet1.xml', packed: { bytes: packed, size: sheet.length, crc: crc32(sheet) } },
  ]);
}

const HEADER = '<row r="1"><c r="A1" t="inlineStr"><is><t>sample_id</t></is></c><c r="B1" t="inlineStr"><is><t>extract_conc</t></is></c></row>';

export async function writeHostile(dir) {
  const out = [];
  const write = async (name, bytes) => {
    const path = join(dir, `${name.replace(/[^a-z0-9]+/gi, '-')}.xlsx`);
    const ws = createWriteStream(path);
    ws.end(bytes);
    await once(ws, 'finish');
    out.push({ name, path });
  };
  // ~480 MiB of empty styled cells in one row each (16384 per row): kept nowhere.
  const emptyRow = `<row>${'<c s="1"/>'.repeat(16384)}</row>`;
  await write('empty styled cells, 480 MiB', workbook(HEADER, emptyRow, 3000, ''));
  // A wide header (16384 columns) over one-cell rows: rows x header width is the cost.
  let wide = '<row r="1">';
  for (let c = 0; c < 16384; c++) wide += `<c t="inlineStr"><is><t>h${c}</t></is></c>`;
  wide += '</row>';
  await write('wide header over one-cell rows', workbook(wide, '<row><c><v>1</v></c></row>', 2_000_000, ''));
  // Many values beyond a two-column header.
  await write('values beyond the header', workbook(HEADER, `<row>${'<c><v>7</v></c>'.repeat(4000)}</row>`, 8000, ''));
  // As many kept number cells as the limits let through: 28 columns of distinct decimals, a null now and then
  // (so that the columns hold boxed numbers, the costliest kind), about 500 MiB of XML.
  {
    const cols = 28;
    let head = '<row r="1">';
    for (let c = 0; c < cols; c++) head += `<c t="inlineStr"><is><t>n${c}</t></is></c>`;
    head += '</row>';
    const chunks = [Buffer.from(head)];
    let text = '';
    for (let r = 2; r < 2 + 780_000; r++) {
      text += '<row>';
      for (let c = 0; c < cols; c++) text += c === cols - 1 && r % 100 === 0 ? '<c/>' : `<c><v>${r}.${c + 1}</v></c>`;
      text += '</row>';
      if (text.length > 1 << 20) {
        chunks.push(Buffer.from(text));
        text = '';
      }
    }
    chunks.push(Buffer.from(text));
    await write('number cells up to the limits', workbook(chunks, '', 0, ''));
  }
  // One row numbered far past the others.
  await write('row 2,000,000,000', workbook(HEADER, '<row r="2"><c r="A2" t="inlineStr"><is><t>A</t></is></c><c r="B2"><v>1</v></c></row>', 1, '<row r="2000000000"><c r="A2000000000"><v>1</v></c></row>'));
  return out;
}
