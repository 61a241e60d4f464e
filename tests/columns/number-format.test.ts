/**
 * One reading per number (issue 13). The rules are the trade's (common practice): a
 * decimal comma or point, thousands grouped by the other mark or by spaces (ISO 80000-1
 * §7.3.1 groups digits in threes, from memory). The properties: a column written in one
 * format, with any non-detect words among it, reads back exactly; a file is never read
 * two ways (every cell either reads to its true value or is refused).
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { decideFormat, evidenceOf, readAs, readNumber, type NumberFormat } from '../../src/columns/number-format.js';
import { NonDetectReader } from '../../src/columns/nondetect.js';

const cellsOf = (texts: string[], delimiter = ',') => decideFormat(texts, { delimiter });

describe('evidenceOf: what one cell shows', () => {
  it.each([
    ['0,788', { decimal: ',' }],
    ['12,5', { decimal: ',' }],
    ['0.875', { decimal: '.' }],
    ['12.25', { decimal: '.' }],
    ['1.234,5', { decimal: ',', grouping: '.' }],
    ['1,234.5', { decimal: '.', grouping: ',' }],
    ['1.234.567', { decimal: ',', grouping: '.' }],
    ['1.234', {}], // a decimal point, or thousands grouped by points
    ['1,234', {}],
    ['1000', {}],
    ['1,5e-3', { decimal: ',' }], // an exponent rules grouping out
    ['ND', {}],
  ])('%j shows %o', (text, evidence) => {
    expect(evidenceOf(text)).toEqual(evidence);
  });
});

describe('decideFormat: once per file', () => {
  it('the found case: "1.234" beside "1.251,5" in a semicolon file is refused with both readings, never read as 1.234', () => {
    const f = cellsOf(['1.251,5', '1.234', '0,788'], ';');
    expect([f.decimal, f.grouping, f.basis]).toEqual([',', 'none', 'cells']);
    expect(readNumber('1.251,5', f)).toEqual({ ok: true, value: 1251.5 }); // only one reading fits it
    expect(readNumber('1.234', f)).toEqual({
      ok: false,
      reason:
        "could be read two ways: 1234 with the file's decimal comma and thousands grouped by points, or 1.234 with a decimal point; " +
        'declare the number format in the method (number_format) to read it that way',
    });
    expect(readNumber('0,788', f)).toEqual({ ok: true, value: 0.788 });
    // Declared, the same cells read one way each.
    const declared = decideFormat(['1.251,5', '1.234'], { declared: { decimal_mark: ',', grouping: '.' } });
    expect(readNumber('1.234', declared)).toEqual({ ok: true, value: 1234 });
  });

  it('the majority decides; the minority is refused with its reading', () => {
    const f = cellsOf(['0.875', '12.25', '0,5']);
    expect(f.how).toBe('decimal point, from the file (2 cells such as "0.875"; 1 cell written with a decimal comma is refused), no digit grouping');
    expect(readNumber('0,5', f)).toEqual({
      ok: false,
      reason: "expected a number with the file's decimal point; it would read 0.5 with a decimal comma: declare the number format in the method (number_format) to read it that way",
    });
  });

  it.each([
    [',', '.', 'decimal point, from the comma delimiter (no cell shows its decimal mark), no digit grouping'],
    [';', ',', 'decimal comma, from the semicolon delimiter (no cell shows its decimal mark), no digit grouping'],
    ['\t', '.', 'decimal point, from the tab delimiter (no cell shows its decimal mark), no digit grouping'],
  ])('with no evidence, the %j delimiter breaks the tie, and says so', (delimiter, decimal, how) => {
    const f = cellsOf(['12', '1.234'], delimiter);
    expect([f.decimal, f.basis, f.how]).toEqual([decimal, 'delimiter', how]);
  });

  it('a guessed mark refuses what the other mark reads differently', () => {
    const f = cellsOf(['12', '250.000'], ',');
    expect(readNumber('250.000', f)).toEqual({
      ok: false,
      reason:
        'could be read two ways: 250 with a decimal point (only a guess: no cell of the file shows its decimal mark), or 250000 with thousands grouped by points and a decimal comma; ' +
        'declare the number format in the method (number_format) to read it that way',
    });
    expect(readNumber('12', f)).toEqual({ ok: true, value: 12 });
  });

  it.each([
    [{ decimal_mark: ',', grouping: '.' }, '1.234,5', 1234.5],
    [{ decimal_mark: ',', grouping: '.' }, '1.234', 1234],
    [{ decimal_mark: '.', grouping: ',' }, '1,234.5', 1234.5],
    [{ decimal_mark: ',', grouping: ' ' }, '1 234,5', 1234.5],
    [{ decimal_mark: ',', grouping: ' ' }, '1\u00a0234,5', 1234.5],
    [{ decimal_mark: '.', grouping: "'" }, "1'234.5", 1234.5],
    [{ decimal_mark: ',' }, '0,5', 0.5],
  ] as const)('a declared format %o reads %j as %d', (declared, text, value) => {
    expect(readNumber(text, decideFormat([], { declared }))).toEqual({ ok: true, value });
  });

  it('a declared format refuses what it cannot read, and says the method says otherwise', () => {
    const f = decideFormat([], { declared: { decimal_mark: ',', grouping: 'none' } });
    expect(readNumber('1.234', f)).toEqual({
      ok: false,
      reason:
        "expected a number with the file's decimal comma; it would read 1234 with thousands grouped by points, or 1.234 with a decimal point: " +
        "the method's number_format says otherwise: correct the cell, or the method",
    });
  });
});

describe('readAs', () => {
  it.each([
    ['12 34', ',', ' ', undefined], // groups of three only
    ['1.23.4', ',', '.', undefined],
    ['-1,5', ',', 'none', -1.5],
    ['+2.5e3', '.', 'none', 2500],
    ['.5', '.', 'none', 0.5],
    ['5,', ',', 'none', 5],
    ['1e400', '.', 'none', undefined], // beyond a double
  ] as const)('%j with %j and grouping %j is %s', (text, decimal, grouping, value) => {
    expect(readAs(text, decimal, grouping)).toBe(value);
  });
});

describe('properties', () => {
  // Numbers as a lab writes them: up to 6 decimals, below a million.
  const value = fc.integer({ min: -999_999_999, max: 999_999_999 }).map((n) => n / 1000);
  const write = (x: number, f: { decimal: '.' | ','; grouping: 'none' | '.' | ',' | ' ' }) => {
    const [int, frac] = Math.abs(x).toFixed(3).replace(/0+$/, '').replace(/\.$/, '').split('.');
    const grouped = f.grouping === 'none' ? int! : int!.replace(/\B(?=(\d{3})+(?!\d))/g, f.grouping);
    return `${x < 0 ? '-' : ''}${grouped}${frac ? f.decimal + frac : ''}`;
  };
  const format = fc.constantFrom(
    { decimal: '.' as const, grouping: 'none' as const },
    { decimal: ',' as const, grouping: 'none' as const },
    { decimal: ',' as const, grouping: '.' as const },
    { decimal: '.' as const, grouping: ',' as const },
    { decimal: ',' as const, grouping: ' ' as const },
  );
  const words = fc.constantFrom('ND', 'n.d.', 'No Peak', 'BLQ', '<LLOQ', 'not detected');

  it('a column written in one declared format, with non-detect words among it, reads back exactly', () => {
    fc.assert(
      fc.property(format, fc.array(fc.oneof(value, words), { minLength: 1, maxLength: 40 }), (f, cells) => {
        const declared = decideFormat([], { declared: { decimal_mark: f.decimal, grouping: f.grouping } });
        const nd = new NonDetectReader();
        for (const c of cells) {
          const text = typeof c === 'number' ? write(c, f) : c;
          if (typeof c === 'string') expect(nd.read(text, declared)).toEqual({});
          else expect(readNumber(text, declared)).toEqual({ ok: true, value: c });
        }
      }),
      { numRuns: 300 },
    );
  });

  it('a file is never read two ways: decided from its own cells, every cell reads to its value or is refused', () => {
    fc.assert(
      fc.property(format, fc.array(value, { minLength: 1, maxLength: 40 }), fc.constantFrom(',', ';', '\t'), (f, values, delimiter) => {
        const texts = values.map((x) => write(x, f));
        const decided: NumberFormat = decideFormat(texts, { delimiter });
        for (let i = 0; i < texts.length; i++) {
          const r = readNumber(texts[i]!, decided);
          if (r.ok) expect(r.value).toBe(values[i]); // never a wrong number: a right one, or a refusal
        }
      }),
      { numRuns: 500 },
    );
  });
});
