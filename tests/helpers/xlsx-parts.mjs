/**
 * Workbooks written by hand, part by part (ECMA-376 Part 1 and Part 2), for the
 * cases a test must state byte for byte: what a program other than ours may
 * write (prefixed namespaces, absolute targets, inline strings, cells without
 * references) and what no program should (a number cell holding "12,5").
 */
import { buildZip } from './zip.mjs';

const MAIN = 'http://schemas.openxmlformats.org/spreadsheetml/2006/main';
const REL = 'http://schemas.openxmlformats.org/officeDocument/2006/relationships';
const PKG_REL = 'http://schemas.openxmlformats.org/package/2006/relationships';

const esc = (s) => s.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/"/g, '&quot;');

/** The zip entries of a workbook; `sheets[i].xml` is the `<sheetData>` content, or `sheets[i].part` a whole part. */
export function workbookEntries(spec) {
  const sheets = spec.sheets;
  const target = (i) => (spec.absoluteTargets ? `/xl/worksheets/sheet${i + 1}.xml` : `worksheets/sheet${i + 1}.xml`);
  const entries = [
    {
      name: '[Content_Types].xml',
      data: Buffer.from(
        `<?xml version="1.0" encoding="UTF-8" standalone="yes"?><Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/></Types>`,
      ),
    },
    {
      name: '_rels/.rels',
      data: Buffer.from(`<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="${PKG_REL}"><Relationship Id="rId1" Type="${REL}/officeDocument" Target="${spec.absoluteTargets ? '/xl/workbook.xml' : 'xl/workbook.xml'}"/></Relationships>`),
    },
    {
      name: 'xl/workbook.xml',
      data: Buffer.from(
        `<?xml version="1.0" encoding="UTF-8"?><workbook xmlns="${MAIN}" xmlns:r="${REL}">${spec.date1904 ? '<workbookPr date1904="1"/>' : ''}<sheets>` +
          sheets.map((s, i) => `<sheet name="${esc(s.name)}" sheetId="${i + 1}" r:id="rId${i + 1}"/>`).join('') +
          '</sheets></workbook>',
      ),
    },
    {
      name: 'xl/_rels/workbook.xml.rels',
      data: Buffer.from(
        `<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="${PKG_REL}">` +
          sheets.map((_s, i) => `<Relationship Id="rId${i + 1}" Type="${REL}/worksheet" Target="${target(i)}"/>`).join('') +
          (spec.sharedStrings ? `<Relationship Id="rIdS" Type="${REL}/sharedStrings" Target="sharedStrings.xml"/>` : '') +
          (spec.styles ? `<Relationship Id="rIdT" Type="${REL}/styles" Target="styles.xml"/>` : '') +
          '</Relationships>',
      ),
    },
  ];
  sheets.forEach((s, i) => {
    if (s.lying) entries.push({ name: `xl/worksheets/sheet${i + 1}.xml`, packed: s.lying.packed, statedSize: s.lying.statedSize });
    else entries.push({ name: `xl/worksheets/sheet${i + 1}.xml`, data: Buffer.from(s.part ?? `<?xml version="1.0" encoding="UTF-8"?><worksheet xmlns="${MAIN}"><sheetData>${s.xml}</sheetData></worksheet>`) });
  });
  if (spec.sharedStrings) {
    entries.push({
      name: 'xl/sharedStrings.xml',
      data: Buffer.from(`<?xml version="1.0" encoding="UTF-8"?><sst xmlns="${MAIN}">${spec.sharedStrings.map((s) => (s.startsWith('<') ? s : `<si><t>${esc(s)}</t></si>`)).join('')}</sst>`),
    });
  }
  if (spec.styles) entries.push({ name: 'xl/styles.xml', data: Buffer.from(`<?xml version="1.0" encoding="UTF-8"?><styleSheet xmlns="${MAIN}">${spec.styles}</styleSheet>`) });
  return entries;
}

/** The workbook as the bytes of an .xlsx file. */
export function handWrittenWorkbook(spec) {
  return buildZip(workbookEntries(spec));
}
