import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { firstInvalidUtf8, readCsv, sniffDelimiter, type CsvReadOptions } from '../../src/read/csv.js';
import { stopOf } from '../helpers/stop.js';

let dir: string;
let n = 0;

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'phasebook-csv-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

async function csvFile(content: string | Buffer, name = `f${n++}.csv`): Promise<string> {
  const p = join(dir, name);
  await writeFile(p, content);
  return p;
}


describe('readCsv: delimiters, decimal comma, BOM, line ends, quoting', () => {
  it.each([
    {
      name: 'comma, LF',
      text: 'sample_id,conc\nA1,1.25\nA2,3\n',
      delimiter: ',',
      decimalComma: false,
      headers: ['sample_id', 'conc'],
      columns: [['A1', 'A2'], ['1.25', '3']],
      rowNumbers: [2, 3],
    },
    {
      // A one-row European file is where papaparse's own guess fails (LIBRARY-NOTES.md §3).
      name: 'semicolon with a decimal comma, one data row',
      text: 'sample;conc\nA1;1,25\n',
      delimiter: ';',
      decimalComma: true,
      headers: ['sample', 'conc'],
      columns: [['A1'], ['1,25']],
      rowNumbers: [2],
    },
    {
      name: 'tab',
      text: 'a\tb\n1\t2\n',
      delimiter: '\t',
      decimalComma: false,
      headers: ['a', 'b'],
      columns: [['1'], ['2']],
      rowNumbers: [2],
    },
    {
      // Common practice: Excel's "CSV UTF-8" writes a BOM and CRLF line ends.
      name: 'UTF-8 BOM and CRLF',
      text: '\uFEFFa,b\r\n1,2\r\n3,4\r\n',
      delimiter: ',',
      decimalComma: false,
      headers: ['a', 'b'],
      columns: [['1', '3'], ['2', '4']],
      rowNumbers: [2, 3],
    },
    {
      name: 'trailing blank lines (also spaces-only and delimiter-only lines) are ignored',
      text: 'a,b\n1,2\n\n  \n,,\n\n',
      delimiter: ',',
      decimalComma: false,
      headers: ['a', 'b'],
      columns: [['1'], ['2']],
      rowNumbers: [2],
    },
    {
      name: 'a blank line between rows still counts as a spreadsheet row',
      text: 'a,b\n1,2\n\n3,4\n',
      delimiter: ',',
      decimalComma: false,
      headers: ['a', 'b'],
      columns: [['1', '3'], ['2', '4']],
      rowNumbers: [2, 4],
    },
    {
      // RFC 4180 §2 rules 6 and 7: quoted fields hold delimiters, line breaks and doubled quotes.
      name: 'quoted cells with delimiters, line breaks and doubled quotes',
      text: 'a,b,c\n"x,y","line1\nline2","say ""hi"""\n3,4,5\n',
      delimiter: ',',
      decimalComma: false,
      headers: ['a', 'b', 'c'],
      columns: [['x,y', '3'], ['line1\nline2', '4'], ['say "hi"', '5']],
      rowNumbers: [2, 3],
    },
    {
      name: 'semicolon sniff ignores commas inside quotes',
      text: '"name, full";conc;vol\n"Doe, J";1,5;2\n',
      delimiter: ';',
      decimalComma: true,
      headers: ['name, full', 'conc', 'vol'],
      columns: [['Doe, J'], ['1,5'], ['2']],
      rowNumbers: [2],
    },
    {
      name: 'cells and headers verbatim: spaces, leading zeros, formula-like and exponent-like text',
      text: ' sample_id ,conc\n0012, 12.5 \n=1+1,1E5\n',
      delimiter: ',',
      decimalComma: false,
      headers: [' sample_id ', 'conc'],
      columns: [['0012', '=1+1'], [' 12.5 ', '1E5']],
      rowNumbers: [2, 3],
    },
    {
      name: 'non-ASCII text',
      text: 'analyte,unit\nβ-estradiol,µg/L\n',
      delimiter: ',',
      decimalComma: false,
      headers: ['analyte', 'unit'],
      columns: [['β-estradiol'], ['µg/L']],
      rowNumbers: [2],
    },
    {
      name: 'blank lines before the header: the header keeps its real row number',
      text: '\n\nsample;conc\nA1;2,5\n',
      delimiter: ';',
      decimalComma: true,
      headers: ['sample', 'conc'],
      columns: [['A1'], ['2,5']],
      rowNumbers: [4],
    },
    {
      name: 'a single column (no delimiter in the header) is read as comma',
      text: 'sample_id\nA\nB\n',
      delimiter: ',',
      decimalComma: false,
      headers: ['sample_id'],
      columns: [['A', 'B']],
      rowNumbers: [2, 3],
    },
    {
      name: 'no newline at the end of the file',
      text: 'a,b\n1,2',
      delimiter: ',',
      decimalComma: false,
      headers: ['a', 'b'],
      columns: [['1'], ['2']],
      rowNumbers: [2],
    },
  ])('$name', async ({ text, delimiter, decimalComma, headers, columns, rowNumbers }) => {
    const p = await csvFile(text);
    const t = await readCsv(p);
    expect(t.source).toBe(p);
    // The reader notes whether the file began with a byte-order mark: the results CSV does then too.
    expect(t.format).toEqual({ kind: 'csv', delimiter, decimalComma, bom: text.startsWith('\uFEFF') });
    expect(t.headers).toEqual(headers);
    expect(t.columns).toEqual(columns);
    expect(t.rowCount).toBe(rowNumbers.length);
    expect(Array.from(t.rowNumbers)).toEqual(rowNumbers);
    expect(t.rowProblems).toEqual([]);
  });

  it('an explicit delimiter wins over the sniff', async () => {
    // The header has more commas than semicolons, but the caller says ';'.
    const p = await csvFile('a,b;c\n1,2;3\n');
    const t = await readCsv(p, { delimiter: ';' });
    expect(t.headers).toEqual(['a,b', 'c']);
    expect(t.columns).toEqual([['1,2'], ['3']]);
    expect(t.format.decimalComma).toBe(true);
  });
});

describe('readCsv: short and long rows are row problems, not stops', () => {
  it('a short row gets nulls for its missing cells and a problem naming its row', async () => {
    const p = await csvFile('a,b,c\n1,2,3\n4,5\n6,7,8\n');
    const t = await readCsv(p);
    expect(t.columns).toEqual([['1', '4', '6'], ['2', '5', '7'], ['3', null, '8']]);
    expect(t.rowProblems).toEqual([{ row: 1, message: 'row 3: expected 3 cells, got 2' }]);
  });

  it('a long row loses its extra values and says which', async () => {
    const p = await csvFile('a,b\n1,2,x,y\n3,4\n');
    const t = await readCsv(p);
    expect(t.columns).toEqual([['1', '3'], ['2', '4']]);
    expect(t.rowProblems).toEqual([{ row: 0, message: 'row 2: expected 2 cells, got 4; extra values "x", "y" were dropped' }]);
  });

  it('extra empty cells (a trailing delimiter) lose nothing and are not a problem', async () => {
    const p = await csvFile('a,b\n1,2,\n3,4, ,\n');
    const t = await readCsv(p);
    expect(t.columns).toEqual([['1', '3'], ['2', '4']]);
    expect(t.rowProblems).toEqual([]);
  });

  it('row numbers stay right after a multi-line quoted cell and a blank line', async () => {
    const p = await csvFile('a,b\n"x\ny",1\n\n2\n');
    const t = await readCsv(p);
    // Spreadsheet rows: header 1, the quoted record 2, blank 3, short row 4.
    expect(Array.from(t.rowNumbers)).toEqual([2, 4]);
    expect(t.rowProblems).toEqual([{ row: 1, message: 'row 4: expected 2 cells, got 1' }]);
  });
});

describe('readCsv: whole-file stops name the file and, where there is one, the line', () => {
  it.each<{ name: string; content: string | Buffer; options?: CsvReadOptions; message: RegExp; line?: number; column?: string }>([
    { name: 'empty file', content: '', message: /^is empty, expected a header row and data rows$/ },
    { name: 'only a BOM and blank lines', content: '\uFEFF\n\n  \r\n', message: /^is empty, expected a header row and data rows$/ },
    { name: 'header only', content: 'a,b\n', message: /^has a header row but no data rows, expected at least one row of data below the header$/ },
    { name: 'header and blank lines only', content: 'a,b\n\n,\n', message: /^has a header row but no data rows, expected at least one row of data below the header$/ },
    {
      name: 'NUL bytes (binary)',
      content: Buffer.from([0x61, 0x2c, 0x62, 0x0a, 0x31, 0x00, 0x02, 0x0a]),
      message: /^does not look like a CSV text file: it holds binary data \(a NUL byte at byte 6\)$/,
      line: 2,
    },
    {
      // RFC 3629: 0xB5 alone (Latin-1 "µ") is not UTF-8.
      name: 'Latin-1 text (invalid UTF-8)',
      content: Buffer.from('sample,unit\nA,\xb5g/L\n', 'latin1'),
      message: /^does not look like a CSV text file: invalid UTF-8 at byte 15 \(0xB5\); save it as UTF-8 CSV$/,
      line: 2,
    },
    {
      name: 'UTF-16 text',
      content: Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from('a,b\n1,2\n', 'utf16le')]),
      message: /^does not look like a CSV text file: it is UTF-16 text; save it as UTF-8 CSV$/,
    },
    {
      name: 'an unclosed quote (line counted after a multi-line cell)',
      content: 'a,b\n"x\ny",2\n3,"open\n4,5\n',
      message: /^a quoted cell that starts on line 4 is never closed; expected a closing " before the end of the file$/,
      line: 4,
    },
    {
      name: 'an unclosed quote in CRLF text',
      content: 'a,b\r\n1,2\r\n3,4\r\n5,"x\r\n',
      message: /starts on line 4 is never closed/,
      line: 4,
    },
    {
      // Refused once the open record passes 1 MiB, not after re-reading it with every chunk to the end.
      name: 'an unclosed quote early in a large file',
      content: 'a,b\n1,2\n3,"open\n' + 'x,y\n'.repeat(800_000),
      message: /^a quoted cell that starts on line 3 runs on for more than 1 MiB without a closing "; expected a closing " \(a quote is probably missing\)$/,
      line: 3,
    },
    {
      // A record that long without any quote is a line that never ends, not an open quote (issue 19).
      name: 'an unquoted row of 1.2 million characters',
      content: 'a,b\n1,2\nA,' + 'x'.repeat(1_200_000) + '\n3,4\n',
      message: /^the row that starts on line 3 runs on for more than 1 MiB without ending; expected rows of a worklist \(a cell that long is not one\)$/,
      line: 3,
    },
    {
      name: 'text after a closing quote',
      content: 'a,b\n1,2\n"x"y,2\n',
      message: /^a quoted cell on line 3 has text after its closing quote; expected the delimiter or the end of the line right after a closing "$/,
      line: 3,
    },
    {
      name: 'a duplicated header',
      content: 'sample_id,conc,sample_id\n1,2,3\n',
      message: /^the header "sample_id" appears twice \(columns 1 and 3\); expected each header once$/,
      line: 1,
      column: 'sample_id',
    },
    {
      name: 'a header duplicated once spaces are trimmed',
      content: 'conc, conc \n1,2\n',
      message: /the header "conc" appears twice \(columns 1 and 2\)/,
      line: 1,
      column: 'conc',
    },
    {
      // The size is refused before reading: this content would otherwise fail as binary.
      name: 'larger than maxBytes',
      content: Buffer.alloc(1536, 0),
      options: { maxBytes: 1000 },
      message: /^is 1.5 KiB, larger than the 1000 bytes accepted$/,
    },
  ])('$name', async ({ content, options, message, line, column }) => {
    const p = await csvFile(content);
    const err = await stopOf(readCsv(p, options));
    expect(err.kind).toBe('input');
    expect(err.message).toMatch(message);
    expect(err.location.file).toBe(p);
    expect(err.location.line).toBe(line);
    expect(err.location.column).toBe(column);
    expect(err.describe()).toContain(p);
  });

  it('a missing file', async () => {
    const p = join(dir, 'nope.csv');
    const err = await stopOf(readCsv(p));
    expect(err.describe()).toBe(`${p}: cannot be read: no such file`);
  });

  it('a folder', async () => {
    const p = join(dir, 'folder.csv');
    await mkdir(p);
    const err = await stopOf(readCsv(p));
    expect(err.describe()).toBe(`${p}: is a folder, expected a worklist file`);
  });
});

describe('readCsv: streaming over many chunks', () => {
  it('keeps row numbers, cells and text lines right across stream chunks', async () => {
    // 3000 rows, every 100th with a two-line quoted note, then an unclosed quote.
    // The file is larger than one 64 KiB stream chunk many times over.
    const lines = ['sample_id,conc,note'];
    let textLine = 1;
    const expectedRows: number[] = [];
    for (let i = 0; i < 3000; i++) {
      const multi = i % 100 === 0;
      lines.push(`S${i},${i}.5,${multi ? '"first\nsecond"' : 'plain note text for padding the file out'}`);
      expectedRows.push(i + 2);
      textLine += multi ? 2 : 1;
    }
    const good = await csvFile(lines.join('\n') + '\n');
    const t = await readCsv(good);
    expect(t.rowCount).toBe(3000);
    expect(Array.from(t.rowNumbers)).toEqual(expectedRows);
    expect(t.columns[0]![2999]).toBe('S2999');
    expect(t.columns[1]![1234]).toBe('1234.5');
    expect(t.columns[2]![100]).toBe('first\nsecond');

    const bad = await csvFile(lines.join('\n') + '\nS3000,1,"never closed\nmore\n');
    const err = await stopOf(readCsv(bad));
    // Lines: header 1, 3000 records over textLine - 1 lines, so the bad record starts on textLine + 1.
    expect(err.location.line).toBe(textLine + 1);
    expect(err.message).toContain(`starts on line ${textLine + 1}`);
  });
});

describe('readCsv: the whole file is checked, not only its first 64 KiB', () => {
  /** About 100 KiB of good rows (text lines 2..1601), so damage after them is past the head check. */
  const body = ['sample_id,conc,note', ...Array.from({ length: 1600 }, (_, i) => `S${i},${i}.5,plain note text for padding`)].join('\n') + '\n';
  const bodyBytes = Buffer.byteLength(body);

  it.each([
    {
      name: 'a Latin-1 byte (µ) at row 1602',
      tail: Buffer.from([0x53, 0x2c, 0x31, 0x2c, 0xb5, 0x67, 0x0a]), // "S,1,\xB5g\n"
      // RFC 3629: 0xB5 alone is not UTF-8. The byte is the 5th of the last line.
      message: `does not look like a CSV text file: invalid UTF-8 at byte ${bodyBytes + 5} (0xB5); save it as UTF-8 CSV`,
    },
    {
      name: 'a NUL byte at row 1602',
      tail: Buffer.from([0x53, 0x2c, 0x00, 0x0a]),
      message: `does not look like a CSV text file: it holds binary data (a NUL byte at byte ${bodyBytes + 3})`,
    },
    {
      name: 'a UTF-8 sequence cut short by the end of the file',
      tail: Buffer.from([0x53, 0x2c, 0xe2, 0x82]), // the first two bytes of "€"
      message: `does not look like a CSV text file: invalid UTF-8 at byte ${bodyBytes + 3} (0xE2); save it as UTF-8 CSV`,
    },
  ])('$name stops the run with the byte and its text line', async ({ tail, message }) => {
    const err = await stopOf(readCsv(await csvFile(Buffer.concat([Buffer.from(body), tail]))));
    expect(err.message).toBe(message);
    expect(err.location.line).toBe(1602);
    expect(err.describe()).toMatch(/, line 1602: does not look like a CSV text file: /);
  });

  it('multi-byte characters split across stream chunks are read whole', async () => {
    // "µ" (2 bytes) and "😀" (4 bytes) repeated, so some straddle a 64 KiB chunk edge.
    const note = 'µ😀'.repeat(20);
    const text = ['sample_id,note', ...Array.from({ length: 3000 }, (_, i) => `S${i},${note}`)].join('\n') + '\n';
    const t = await readCsv(await csvFile(text));
    expect(t.rowCount).toBe(3000);
    expect(t.columns[1]!.every((v) => v === note)).toBe(true);
  });
});

describe('readCsv: line ends', () => {
  it('CRLF, LF and lone CR mixed in one file each end a record: no row is glued to the next', async () => {
    const t = await readCsv(await csvFile('a,b\r\n1,x\r\n2,y\n3,z\r4,w\r\n'));
    expect(t.columns[0]).toEqual(['1', '2', '3', '4']);
    expect(t.columns[1]).toEqual(['x', 'y', 'z', 'w']);
    expect(Array.from(t.rowNumbers)).toEqual([2, 3, 4, 5]);
    expect(t.rowProblems).toEqual([]);
  });

  it('a CRLF split across two stream chunks is one line end', async () => {
    // A 17-byte header, then rows of 16 bytes: CRs sit at byte offsets 15 + 16m, so the CR of
    // row 4095 is the last byte of the first 64 KiB stream chunk (offset 65535) and its LF starts the next.
    const rows = Array.from({ length: 9000 }, (_, i) => `${String(i).padStart(5, '0')},abcdefgh\r\n`);
    const t = await readCsv(await csvFile('sample_id,numbr\r\n' + rows.join('')));
    expect(t.rowCount).toBe(9000);
    expect(Array.from(t.rowNumbers)).toEqual(Array.from({ length: 9000 }, (_, i) => i + 2));
    expect(t.columns[1]!.every((v) => v === 'abcdefgh')).toBe(true);
  });

  it('the header row is recorded when blank lines come first', async () => {
    const t = await readCsv(await csvFile('\n\na,b\n1,2\n'));
    expect(t.headerRow).toBe(3);
    expect(Array.from(t.rowNumbers)).toEqual([4]);
  });
});

describe('sniffDelimiter', () => {
  it.each([
    ['a,b,c\n1;2', ','],
    ['a;b;c\n1,2', ';'],
    ['a\tb\tc', '\t'],
    ['"a;b",c,d', ','],
    ['"a,b";c;d', ';'],
    ['a;b,c', ','], // a tie goes to the comma
    ['single', ','],
    ['a;b\r\nc,d,e,f', ';'], // only the header line counts
    ['\n \r\na;b\nc,d,e', ';'], // blank lines before the header are passed over
  ] as const)('%j → %j', (text, want) => {
    expect(sniffDelimiter(text)).toBe(want);
  });
});

describe('firstInvalidUtf8', () => {
  // Well-formed byte sequences: Unicode Standard Table 3-7 / RFC 3629 §4.
  it.each([
    ['ASCII', [0x61, 0x62], true, -1],
    ['é (C3 A9)', [0x61, 0xc3, 0xa9], true, -1],
    ['€ (E2 82 AC)', [0xe2, 0x82, 0xac], true, -1],
    ['U+1D11E (F0 9D 84 9E)', [0xf0, 0x9d, 0x84, 0x9e], true, -1],
    ['overlong C0 80', [0x61, 0xc0, 0x80], true, 1],
    ['overlong E0 80 80', [0xe0, 0x80, 0x80], true, 0],
    ['surrogate ED A0 80', [0xed, 0xa0, 0x80], true, 0],
    ['above U+10FFFF (F4 90 80 80)', [0xf4, 0x90, 0x80, 0x80], true, 0],
    ['lone continuation byte', [0x61, 0x80], true, 1],
    ['Latin-1 µ', [0x31, 0xb5, 0x67], true, 1],
    ['cut at the end of the whole file', [0x61, 0xe2, 0x82], true, 1],
    ['cut at the end of a partial head', [0x61, 0xe2, 0x82], false, -1],
  ] as const)('%s', (_name, bytes, complete, want) => {
    expect(firstInvalidUtf8(Buffer.from(bytes), complete)).toBe(want);
  });

  it('agrees with the WHATWG TextDecoder (fatal) on arbitrary bytes', () => {
    // Reference: the WHATWG Encoding Standard UTF-8 decoder in Node's TextDecoder.
    const decoder = new TextDecoder('utf-8', { fatal: true });
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 40 }), (bytes) => {
        let valid = true;
        try {
          decoder.decode(bytes);
        } catch {
          valid = false;
        }
        return (firstInvalidUtf8(Buffer.from(bytes), true) === -1) === valid;
      }),
      { numRuns: 3000 },
    );
  });
});
