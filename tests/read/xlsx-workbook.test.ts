import { describe, expect, it } from 'vitest';
import { decodeEscapes, isDateFormatCode, isoCellText, serialToIso, SharedStrings } from '../../src/read/xlsx-workbook.js';
import { resolvePart, relsPartOf } from '../../src/read/xlsx-package.js';

describe('serialToIso: date serials as the sheet shows them', () => {
  // Expected values from openpyxl 3.0.9's openpyxl.utils.datetime.from_excel (the 1900 system, and the 1904
  // system with epoch 1904-01-01), which follows ECMA-376 Part 1 §18.17.4.1 including the 1900-02-29 that
  // does not exist (serial 60); a serial below 1 is a time of day there too.
  it.each([
    [45418, false, '2024-05-06'],
    [45418.5625, false, '2024-05-06T13:30:00'],
    [45418.56251157407, false, '2024-05-06T13:30:01'],
    [45418.0000005787, false, '2024-05-06T00:00:00.050'],
    [61, false, '1900-03-01'],
    [59, false, '1900-02-28'],
    [1, false, '1900-01-01'],
    [0.5625, false, '13:30:00'],
    [43956, true, '2024-05-06'],
    [0.5625, true, '13:30:00'],
    [1, true, '1904-01-02'],
    [2958465, false, '9999-12-31'],
  ])('%s (1904 system: %s) → %s', (serial, date1904, iso) => {
    expect(serialToIso(serial, date1904)).toBe(iso);
  });

  it.each([
    [60, false, 'the 1900-02-29 that Lotus counted'],
    [-1, false, 'before the first day'],
    [2958466, false, 'after 9999-12-31'],
    [Number.NaN, false, 'not a number'],
  ])('%s (1904 system: %s) is no date: %s', (serial, date1904) => {
    expect(serialToIso(serial, date1904)).toBeUndefined();
  });
});

describe('isoCellText: ISO 8601 date cells (t="d")', () => {
  it.each([
    ['2024-05-06', '2024-05-06'],
    ['2024-05-06T00:00:00', '2024-05-06'],
    ['2024-05-06T13:30:00', '2024-05-06T13:30:00'],
    ['2024-05-06T13:30', '2024-05-06T13:30:00'],
    ['2024-05-06T13:30:00Z', '2024-05-06T13:30:00'],
    ['2024-05-06T13:30:00.25', '2024-05-06T13:30:00.250'],
    [' 2024-02-29 ', '2024-02-29'],
  ])('%j → %j', (text, iso) => {
    expect(isoCellText(text)).toBe(iso);
  });

  // 2023 is no leap year (Gregorian calendar rule, common practice).
  it.each(['2024', '2023-02-29', '2024-13-01', '2024-05-06T24:00:00', '2024-05-06T13:30:00+02:00', '06/05/2024', ''])('%j is refused', (text) => {
    expect(isoCellText(text)).toBeUndefined();
  });
});

describe('isDateFormatCode: custom number formats that show a date or time', () => {
  // Format code grammar: ECMA-376 Part 1, §18.8.31 (numFmts); quoted text, [..] sections and \-escaped characters are literal.
  it.each([
    ['yyyy-mm-dd', true],
    ['dd/mm/yyyy hh:mm', true],
    ['[$-409]d-mmm-yy;@', true],
    ['h:mm AM/PM', true],
    ['mm:ss.0', true],
    ['0.00', false],
    ['#,##0.00 "days"', false],
    ['[Red]0.0', false],
    ['0.0\\m', false],
    ['0.00E+00', false],
    ['@', false],
    ['General', false],
    ['_-* #,##0.00_-;\\-* #,##0.00_-', false],
  ])('%j → %s', (code, isDate) => {
    expect(isDateFormatCode(code)).toBe(isDate);
  });
});

describe('decodeEscapes: the _xHHHH_ escapes of ST_Xstring (ECMA-376 Part 1, §22.9.2.19)', () => {
  it.each([
    ['line_x000D_\nbreak', 'line\r\nbreak'],
    ['_x005F_x0041_', '_x0041_'],
    ['no escape', 'no escape'],
    ['_x00e9_', 'é'],
    ['_xZZZZ_', '_xZZZZ_'],
  ])('%j → %j', (text, plain) => {
    expect(decodeEscapes(text)).toBe(plain);
  });
});

describe('SharedStrings', () => {
  it('gives each string back by index, the same string each time, through buffer growth', () => {
    const s = new SharedStrings();
    const texts = Array.from({ length: 5000 }, (_, i) => (i % 3 === 0 ? `é-${i}-${'x'.repeat(i % 50)}` : i % 7 === 0 ? '' : `s${i}`));
    for (const t of texts) s.add(t);
    expect(s.count).toBe(5000);
    texts.forEach((t, i) => expect(s.get(i)).toBe(t));
    expect(s.get(3)).toBe(s.get(3));
  });
});

describe('relationship targets (ECMA-376 Part 2, §9.3)', () => {
  it.each([
    ['xl/workbook.xml', 'worksheets/sheet1.xml', 'xl/worksheets/sheet1.xml'],
    ['xl/workbook.xml', '/xl/worksheets/sheet1.xml', 'xl/worksheets/sheet1.xml'],
    ['xl/workbook.xml', '../customXml/item1.xml', 'customXml/item1.xml'],
    ['xl/workbook.xml', './sharedStrings.xml', 'xl/sharedStrings.xml'],
    ['/', 'xl/workbook.xml', 'xl/workbook.xml'],
  ])('%s → %s is %s', (source, target, part) => {
    expect(resolvePart(source, target)).toBe(part);
  });

  it('finds the relationships part of a part', () => {
    expect(relsPartOf('xl/workbook.xml')).toBe('xl/_rels/workbook.xml.rels');
  });
});
