import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { RawCell } from '../../src/read/types.js';
import { escapeCsvText, formatNumber, writeResultsCsv, type ResultColumn } from '../../src/write/csv.js';

let dir: string;
let n = 0;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'phasebook-csvw-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});
const out = () => join(dir, `out${n++}.csv`);

describe('escapeCsvText: formula injection', () => {
  // OWASP "CSV Injection": cells starting with = + - @ tab CR LF get a leading ' and are quoted;
  // ASVS 5.0 V1.2.10 adds NUL. Embedded quotes are doubled (RFC 4180 §2 rule 7).
  it.each([
    ['=1+1', `"'=1+1"`],
    ['+1', '+1'], // a number written as text is a value, not a formula (issue 5: -2.5 stays a number)
    ['-1', '-1'],
    ['-0.02', '-0.02'],
    ['-1,25', '"-1,25"'], // decimal comma: quoted for the delimiter, not neutralised
    ['-1+1', `"'-1+1"`],
    ['-2.5e3', '-2.5e3'],
    ['-A1', `"'-A1"`],
    ['@SUM(A1:A9)', `"'@SUM(A1:A9)"`],
    ['\t=1+1', `"'\t=1+1"`],
    ['\r=1+1', `"'\r=1+1"`],
    ['\n=1+1', `"'\n=1+1"`],
    ['\0=1+1', `"'\0=1+1"`],
    ['=HYPERLINK("http://example.org","x")', `"'=HYPERLINK(""http://example.org"",""x"")"`],
    ['=1+1\nnote', `"'=1+1\nnote"`], // a trigger plus a line break (missed by papaparse's default regex, LIBRARY-NOTES.md §3)
    ['-2+3+cmd|\' /C calc\'!A0', `"'-2+3+cmd|' /C calc'!A0"`], // the OWASP DDE example
  ])('%j → %s', (input, want) => {
    expect(escapeCsvText(input)).toBe(want);
  });
});

describe('escapeCsvText: RFC 4180 quoting of ordinary text', () => {
  // RFC 4180 §2 rule 6: fields with a delimiter, quote or line break are quoted; rule 7: quotes doubled.
  it.each([
    ['plain', 'plain'],
    ['', ''],
    ['a,b', '"a,b"'],
    ['say "hi"', '"say ""hi"""'],
    ['line\nbreak', '"line\nbreak"'],
    ['cr\rhere', '"cr\rhere"'],
    [' lead', '" lead"'], // leading/trailing space quoted so no reader trims it (common practice)
    ['trail ', '"trail "'],
    ['tab\t', '"tab\t"'],
    ['x=1', 'x=1'], // a trigger only counts at the start
    ['0012', '0012'],
    ['1E5', '1E5'],
    ['a;b', 'a;b'], // the delimiter here is the comma
    ['µg/L', 'µg/L'],
  ])('%j → %s', (input, want) => {
    expect(escapeCsvText(input)).toBe(want);
  });

  it('every escaped field reads back (papaparse) as the text, with a leading \' only for triggers', () => {
    // Reference reader: papaparse, an RFC 4180 parser.
    fc.assert(
      fc.property(
        // Ordinary text, and signed near-numbers ("-0", "+1,5e3", "-1.e", "-.,") to test the number exemption.
        fc.oneof(fc.string({ unit: 'grapheme', maxLength: 20 }), fc.stringMatching(/^[+-][0-9.,eE+-]{0,6}$/)),
        fc.string({ maxLength: 5 }),
        (a, b) => {
          const s = a + b;
          const field = escapeCsvText(s);
          const parsed = Papa.parse<string[]>(`${field},end\n`, { delimiter: ',', newline: '\n' }).data[0]!;
          // A signed number as written ("-0", "+5", "-1,25") is a value and keeps no ' (issue 5);
          // judged here by JavaScript's own Number(), with a decimal comma read as a point.
          const signedNumber = /^[+-]/.test(s) && !/\s|Infinity/.test(s) && !Number.isNaN(Number(s.replace(',', '.')));
          const trigger = /^[=+\-@\t\r\n\0]/.test(s) && !signedNumber;
          return parsed.length === 2 && parsed[0] === (trigger ? `'${s}` : s) && parsed[1] === 'end';
        },
      ),
      { numRuns: 2000 },
    );
  });
});

describe('formatNumber', () => {
  // ECMAScript Number::toString: the shortest digits that round-trip (ECMA-262 §6.1.6.1.20).
  it.each([
    [-2.5, '-2.5'],
    [0.1 + 0.2, '0.30000000000000004'],
    [1 / 3, '0.3333333333333333'],
    [123456789012, '123456789012'],
    [1e21, '1e+21'],
    [1e-7, '1e-7'],
    [-0, '0'],
    [NaN, ''],
    [Infinity, ''],
    [-Infinity, ''],
  ])('%d → %j', (x, want) => {
    expect(formatNumber(x)).toBe(want);
  });

  it('round-trips every finite double', () => {
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), (x) => Number(formatNumber(x)) === x || (x === 0 && formatNumber(x) === '0')),
      { numRuns: 5000 },
    );
  });
});

describe('writeResultsCsv', () => {
  it('writes the exact text: LF, no BOM, numbers as numbers, text neutralised', async () => {
    const p = out();
    await writeResultsCsv(p, {
      headers: ['sample_id', 'note', 'extract_conc', 'pre_extraction_conc [ng/mL]', 'flags'],
      columns: [
        { kind: 'text', values: ['0012', '=1+1', 'S3'] },
        { kind: 'text', values: [null, 'a, "b"', -2.5] }, // -2.5 here is a numeric XLSX input cell
        { kind: 'text', values: ['-0.02', ' 12.5 ', 12] }, // CSV input cells are text: "-0.02" is a number as written, kept
        { kind: 'number', values: Float64Array.from([-2.5, NaN, 0.1 + 0.2]) },
        { kind: 'text', values: ['', 'REC_LOW;RPD_HIGH', '@x'] },
      ],
      rowCount: 3,
    });
    const bytes = await readFile(p);
    expect(bytes.subarray(0, 3).equals(Buffer.from([0xef, 0xbb, 0xbf]))).toBe(false);
    expect(bytes.toString('utf8')).toBe(
      'sample_id,note,extract_conc,pre_extraction_conc [ng/mL],flags\n' +
        `0012,,-0.02,-2.5,\n` +
        `"'=1+1","a, ""b"""," 12.5 ",,REC_LOW;RPD_HIGH\n` +
        `S3,-2.5,12,0.30000000000000004,"'@x"\n`,
    );
  });

  it('neutralises headers too', async () => {
    const p = out();
    await writeResultsCsv(p, { headers: ['=cmd', 'ok'], columns: [{ kind: 'text', values: [] }, { kind: 'text', values: [] }], rowCount: 0 });
    expect(await readFile(p, 'utf8')).toBe(`"'=cmd",ok\n`);
  });

  it('round-trips a table larger than many write buffers, with non-ASCII and a very long cell', async () => {
    // Reference reader: papaparse. 30 000 rows × 6 columns is about 40 buffer flushes.
    const rows = 30_000;
    const ids: RawCell[] = [];
    const notes: RawCell[] = [];
    const nums = new Float64Array(rows);
    const mixed: RawCell[] = [];
    for (let i = 0; i < rows; i++) {
      ids.push(`S-${i}`);
      notes.push(i % 3 === 0 ? `β-estradiol µg/L 😀 "q" ${i}` : i % 3 === 1 ? `line\nbreak, ${i}` : '');
      nums[i] = i % 10 === 0 ? NaN : (i - 15000) / 7;
      mixed.push(i % 2 ? i * 0.25 : null);
    }
    notes[12345] = 'x'.repeat(600_000) + 'é'; // longer than a third of a buffer: written on its own
    const columns: ResultColumn[] = [
      { kind: 'text', values: ids },
      { kind: 'text', values: notes },
      { kind: 'number', values: nums },
      { kind: 'text', values: mixed },
      { kind: 'number', values: nums.map((v) => v * 3) },
      { kind: 'text', values: ids.map((v, i) => (i % 1000 === 0 ? `=${v}` : v)) },
    ];
    const headers = ['id', 'note', 'x', 'mixed', 'x3', 'id2'];
    const p = out();
    await writeResultsCsv(p, { headers, columns, rowCount: rows });

    const parsed = Papa.parse<string[]>(await readFile(p, 'utf8'), { delimiter: ',', newline: '\n', skipEmptyLines: false });
    expect(parsed.errors).toEqual([]);
    const data = parsed.data;
    expect(data[0]).toEqual(headers);
    expect(data).toHaveLength(rows + 2); // header, rows, and the empty string after the last LF
    for (let i = 0; i < rows; i++) {
      const row = data[i + 1]!;
      expect(row[0]).toBe(ids[i]);
      expect(row[1]).toBe(notes[i]);
      expect(row[2] === '' ? NaN : Number(row[2])).toEqual(nums[i]);
      expect(row[3]).toBe(mixed[i] === null ? '' : String(mixed[i]));
      expect(row[5]).toBe(i % 1000 === 0 ? `'=S-${i}` : `S-${i}`);
    }
  });

  it('any table of text and numbers reads back (papaparse) cell for cell', async () => {
    // Reference reader: papaparse. Text comes back with a leading ' exactly when it starts with a trigger.
    const cell = fc.oneof(fc.string({ unit: 'grapheme', maxLength: 12 }), fc.double({ noNaN: true, noDefaultInfinity: true }), fc.constant(null));
    await fc.assert(
      fc.asyncProperty(fc.array(fc.tuple(cell, fc.double()), { minLength: 1, maxLength: 20 }), async (rows) => {
        const p = out();
        const text = rows.map((r) => r[0]);
        const num = Float64Array.from(rows.map((r) => r[1]));
        await writeResultsCsv(p, { headers: ['t', 'n'], columns: [{ kind: 'text', values: text }, { kind: 'number', values: num }], rowCount: rows.length });
        const data = Papa.parse<string[]>(await readFile(p, 'utf8'), { delimiter: ',', newline: '\n' }).data;
        return rows.every(([t, x], i) => {
          const [gotT, gotN] = data[i + 1]!;
          const wantT = t === null ? '' : typeof t === 'number' ? formatNumber(t) : /^[=+\-@\t\r\n\0]/.test(t) ? `'${t}` : t;
          const numberOk = Number.isFinite(x) ? Number(gotN) === x || (x === 0 && gotN === '0') : gotN === '';
          return gotT === wantT && numberOk;
        });
      }),
      { numRuns: 150 },
    );
  });

  it('rejects a table whose headers and columns disagree (a programming error)', async () => {
    await expect(
      writeResultsCsv(out(), { headers: ['a', 'b'], columns: [{ kind: 'text', values: ['x'] }], rowCount: 1 }),
    ).rejects.toThrow('writeResultsCsv: 2 headers but 1 columns');
    await expect(
      writeResultsCsv(out(), { headers: ['a'], columns: [{ kind: 'text', values: [] }], rowCount: 1 }),
    ).rejects.toThrow('writeResultsCsv: column "a" has 0 values, expected 1');
  });

  it('rejects with the file-system error when the folder is missing', async () => {
    await expect(
      writeResultsCsv(join(dir, 'missing', 'x.csv'), { headers: ['a'], columns: [{ kind: 'text', values: ['1'] }], rowCount: 1 }),
    ).rejects.toMatchObject({ code: 'ENOENT' });
  });
});
