import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { Decimal } from 'decimal.js';
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { recalculateData } from '../../src/index.js';
import { dilutionToRange, roundToSignificant, withUncertainty } from '../../src/qc/reported.js';
import { reportedWithMark } from '../../src/write/output-columns.js';

describe('roundToSignificant', () => {
  // Ties: ISO 80000-1:2009 Annex B rule for rounding half to even (from memory: 12.25 → 12.2, 12.35 → 12.4);
  // half away from zero as the common lab report rounds (and a spreadsheet's ROUND: common practice).
  it.each([
    [12.25, 3, 'half-even', '12.2'],
    [12.35, 3, 'half-even', '12.4'],
    [12.25, 3, 'half-away-from-zero', '12.3'],
    [-12.25, 3, 'half-away-from-zero', '-12.3'],
    [-12.25, 3, 'half-even', '-12.2'],
    // 2.665 is held as 2.66499999999999995… in binary; at 15 significant digits, as a spreadsheet keeps it, it is a tie.
    [2.665, 3, 'half-even', '2.66'],
    [2.665, 3, 'half-away-from-zero', '2.67'],
    [0.1 + 0.2, 3, 'half-even', '0.300'],
    // Trailing zeros that are significant are kept; a number's own size decides the decimals.
    [2, 3, 'half-even', '2.00'],
    [0.0046123, 3, 'half-even', '0.00461'],
    [6.19, 3, 'half-even', '6.19'],
    [152.656853, 3, 'half-even', '153'],
    [15234, 3, 'half-even', '15200'],
    [9.996, 3, 'half-even', '10.0'],
    [1e-9, 3, 'half-even', '0.00000000100'],
    [0, 3, 'half-even', '0'],
    [123.456, 5, 'half-even', '123.46'],
    [0.5, 1, 'half-even', '0.5'],
    [25, 1, 'half-even', '20'],
    [35, 1, 'half-even', '40'],
    [25, 1, 'half-away-from-zero', '30'],
  ] as const)('%d to %d figures, ties %s: %s', (x, sig, rounding, expected) => {
    expect(roundToSignificant(x, sig, rounding)).toBe(expected);
  });

  it('agrees with Number.prototype.toPrecision (ECMA-262) wherever the value is not a decimal tie', () => {
    fc.assert(
      fc.property(fc.double({ min: 1e-6, max: 1e8, noNaN: true }), fc.integer({ min: 1, max: 8 }), (x, sig) => {
        const digits = x.toPrecision(15).replace(/e.*$/, '').replace(/[.-]/g, '').replace(/^0+/, '');
        fc.pre(!/^\d*50*$/.test(digits.slice(sig - 1))); // not exactly halfway at 15 digits
        const ours = Number(roundToSignificant(x, sig, 'half-even'));
        expect(ours).toBe(Number(Number(x.toPrecision(15)).toPrecision(sig)));
      }),
      { numRuns: 2000 },
    );
  });
});

describe('withUncertainty: "x ± U"', () => {
  // GUM (JCGM 100:2008) 7.2.6: U to at most two significant digits, the estimate rounded to be consistent with it;
  // its own example, y = 10.057 62 with u_c = 0.027, is given as 10.058 (the standard's text). The other rows apply the same
  // rule by hand: U to two significant figures, x to U's last decimal place; ties as the method says (ISO 80000-1, above).
  it.each([
    [10.05762, 0.027, 'half-even', '10.058 ± 0.027'],
    [0.123456, 0.0148147, 'half-even', '0.123 ± 0.015'],
    [1.23456, 0.0996, 'half-even', '1.23 ± 0.10'], // U rounds up to the next power of ten: two decimals, not three
    [1234.5, 153.4, 'half-even', '1230 ± 150'],
    [98765, 4321, 'half-even', '98800 ± 4300'],
    [5.5, 1.234, 'half-even', '5.5 ± 1.2'],
    [42, 10, 'half-even', '42 ± 10'],
    [1.0125, 0.0125, 'half-even', '1.012 ± 0.012'],
    [1.0125, 0.0125, 'half-away-from-zero', '1.013 ± 0.013'],
    [-0.0004, 0.0101, 'half-even', '0.000 ± 0.010'],
    [-0.0234, 0.0049, 'half-even', '-0.0234 ± 0.0049'],
  ] as const)('%d with U %d, ties %s: %s', (x, u, rounding, expected) => {
    expect(withUncertainty(x, u, rounding)).toBe(expected);
  });

  it('writes both numbers with a decimal comma in a CSV whose worklist used one', () => {
    const method = { reporting: { aboveRange: '> range' } } as Parameters<typeof reportedWithMark>[1];
    expect(reportedWithMark(['0.123 ± 0.015', '< 0.05', '> range (needs dilution ≥ 2.5)'], method, ',')).toEqual(['0,123 ± 0,015', '< 0,05', '> range (needs dilution ≥ 2.5)']);
  });
});

describe('roundToSignificant against decimal.js', () => {
  // The reference: decimal.js (a general-purpose arbitrary-precision library) rounding the 15-digit text,
  // the whole text as a string, for any double and for decimal ties built on purpose.
  const reference = (x: number, sig: number, rounding: 'half-even' | 'half-away-from-zero') => {
    const d = new Decimal(x.toPrecision(15)).toSignificantDigits(sig, rounding === 'half-even' ? Decimal.ROUND_HALF_EVEN : Decimal.ROUND_HALF_UP);
    return d.e >= sig - 1 ? d.toFixed(0) : d.toFixed(sig - 1 - d.e);
  };
  it('gives the same text for any double', () => {
    fc.assert(
      fc.property(fc.double({ min: -1e14, max: 1e14, noNaN: true }).filter((x) => x !== 0), fc.integer({ min: 1, max: 10 }), fc.boolean(), (x, sig, even) => {
        const rule = even ? 'half-even' : 'half-away-from-zero';
        expect(roundToSignificant(x, sig, rule)).toBe(reference(x, sig, rule));
      }),
      { numRuns: 3000 },
    );
  });
  it('gives the same text at decimal ties', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 99999 }), fc.integer({ min: -8, max: 8 }), fc.boolean(), (k, e, even) => {
        const x = Number(`${k}5e${e}`); // digits k then a 5: a tie one figure after k's
        const sig = String(k).length;
        const rule = even ? 'half-even' : 'half-away-from-zero';
        expect(roundToSignificant(x, sig, rule)).toBe(reference(x, sig, rule));
      }),
      { numRuns: 2000 },
    );
  });
});

describe('dilutionToRange', () => {
  // The whole dilution that brings the extract under the top of the range: dilution × extract / top, rounded up (common practice).
  it.each([
    [1, 6190, 5000, 2],
    [1, 10000, 5000, 2],
    [2, 6000, 5000, 3],
    [1, 15000.000000000002, 5000, 3],
    [10, 5001, 5000, 11],
  ])('dilution %d, extract %d, top %d: %d', (d, x, top, expected) => {
    expect(dilutionToRange(d, x, top)).toBe(expected);
  });
});

describe('reported_result on a worklist (issue 14, point 5)', () => {
  const dir = mkdtempSync(join(tmpdir(), 'phasebook-reported-'));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  const method = join(dir, 'method.yaml');
  writeFileSync(
    method,
    readFileSync('templates/surface-water.yaml', 'utf8').replace('qc:\n', 'reporting:\n  significant_figures: 3\n  above_range: "over range"\n\nqc:\n'),
  );
  // Invented rows: 1000 mL of water, 1 mL of extract, naphthalene (RL 0.05 ug/L, range 5–5000 ng/mL).
  const header = 'Sample Name,QC Code,Spiked From,Prep Batch,Compound,Extract Result (ng/mL),Sample Vol (mL),DCM per Portion (mL),Portions,Final Vol (mL),Dilution,Spike Added (ug/L)';
  const rows = [
    'S-1,SAMP,,B1,Naphthalene,123.456,1000,60,3,1,1,', // 0.123456 ug/L (E ≈ 100 %)
    'S-2,SAMP,,B1,Naphthalene,20,1000,60,3,1,1,', // 0.02 ug/L: below the RL 0.05
    'S-3,SAMP,,B1,Naphthalene,ND,1000,60,3,1,1,',
    'S-4,SAMP,,B1,Naphthalene,12000,1000,60,3,1,2,', // 12000 ng/mL at dilution 2: 2 × 12000 / 5000 = 4.8 → 5
    'MB-1,MB,,B1,Naphthalene,10,1000,60,3,1,1,', // a blank below the RL
    'LCS-1,BS,,B1,Naphthalene,40,1000,60,3,1,1,0.05', // a spiked control below the RL reports its number
  ];
  it('rounds, censors below the RL, names the dilution above the range', async () => {
    const result = await recalculateData([header, ...rows].join('\n'), { method, name: 'reported' });
    const ids = result.table.texts.get('sample_id')!;
    const byId = Object.fromEntries(ids.map((id, r) => [id, result.qc.reported[r]]));
    expect(byId).toEqual({
      'S-1': '0.123',
      'S-2': '< 0.05',
      'S-3': '< 0.05',
      'S-4': 'over range (needs dilution ≥ 5)',
      'MB-1': '< 0.05',
      'LCS-1': '0.0400',
    });
  });
});

describe('reported_result with its expanded uncertainty (reporting.with_uncertainty, issue 16)', () => {
  const dir = mkdtempSync(join(tmpdir(), 'phasebook-reported-u-'));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  const base = readFileSync('templates/surface-water.yaml', 'utf8').replace('  Naphthalene:\n    partition_coeff: 1800\n', '  Naphthalene:\n    partition_coeff: 1800\n    expanded_uncertainty_pct: 12\n');
  const header = 'Sample Name,QC Code,Spiked From,Prep Batch,Compound,Extract Result (ng/mL),Sample Vol (mL),DCM per Portion (mL),Portions,Final Vol (mL),Dilution,Extraction pH,Spike Added (ug/L)';
  const rows = [
    'S-1,SAMP,,B1,Naphthalene,123.456,1000,60,3,1,1,,', // 0.123456 ug/L; U = 12 % of it = 0.0148
    'S-2,SAMP,,B1,Naphthalene,20,1000,60,3,1,1,,', // below the RL 0.05: "< 0.05", no U to show
    'S-3,SAMP,,B1,Naphthalene,ND,1000,60,3,1,1,,',
    'S-4,SAMP,,B1,Naphthalene,12000,1000,60,3,1,2,,', // above the range
    'S-5,SAMP,,B1,Quinoline,150,1000,60,3,1,1,11.0,', // an analyte without a U: three significant figures as before
    'LCS-1,BS,,B1,Naphthalene,1900,1000,60,3,1,1,,2.0', // a control carries no U
  ];
  const run = async (withU: boolean) => {
    const method = join(dir, `method-${withU}.yaml`);
    writeFileSync(method, withU ? base.replace('qc:\n', 'reporting:\n  with_uncertainty: true\n\nqc:\n') : base);
    const result = await recalculateData([header, ...rows].join('\n'), { method, name: 'reported-u' });
    const ids = result.table.texts.get('sample_id')!;
    return { result, byId: Object.fromEntries(ids.map((id, r) => [`${id} ${result.table.texts.get('analyte')![r]}`, result.qc.reported[r]])) };
  };

  it('reads "x ± U" on a sample result that carries a U, and nowhere else', async () => {
    const { result, byId } = await run(true);
    expect(byId).toMatchObject({
      'S-1 Naphthalene': '0.123 ± 0.015',
      'S-2 Naphthalene': '< 0.05',
      'S-3 Naphthalene': '< 0.05',
      'S-4 Naphthalene': '> range (needs dilution ≥ 5)',
      'LCS-1 Naphthalene': '1.90',
    });
    expect(byId['S-5 Quinoline']).toMatch(/^0\.\d\d\d$/);
    // The U shown is the one in the expanded_uncertainty column: 12 % of the result (the method's fixed U).
    const x = result.computed.get('pre_extraction_conc')![0]!;
    expect(result.uncertainty!.expanded[0]).toBeCloseTo(0.12 * x, 15);
    expect(withUncertainty(x, result.uncertainty!.expanded[0]!, 'half-even')).toBe(byId['S-1 Naphthalene']);
  });

  it('keeps the significant figures when the method does not ask for it', async () => {
    const { byId } = await run(false);
    expect(byId['S-1 Naphthalene']).toBe('0.123');
  });
});
