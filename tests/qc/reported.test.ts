import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { recalculateData } from '../../src/index.js';
import { dilutionToRange, roundToSignificant } from '../../src/qc/reported.js';

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
