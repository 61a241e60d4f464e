import { describe, expect, it } from 'vitest';
import { inHouseLimits } from '../../src/history/inhouse-limits.js';
import { inHouseKey } from '../../src/qc/limits.js';
import { recalculateTable } from '../../src/pipeline.js';
import { genericMethod, rawTable } from '../fixtures/qc/build.js';

// The 20 LCS recoveries of REFERENCES.md §2 (constructed check values): mean 98.40, s 3.8580,
// control limits p ± 3s = 86.83–109.97 % (US EPA SW-846 Method 8000 practice).
const HISTORY = [95, 102, 98, 91, 105, 99, 97, 100, 94, 103, 96, 101, 99, 92, 104, 98, 100, 97, 95, 102];
const own = inHouseLimits(HISTORY);
const table = new Map([[inHouseKey('atrazine', 'lcs'), { low: own.controlLow, high: own.controlHigh, n: own.n }]]);

// An lcs at 112 % passes the fixed 70–130 % but is above the in-house 109.97 %.
const rows = [{ sample_id: 'L1', sample_type: 'lcs', extract_conc: 11.2, spike_conc: 10 }];

function judge(limits: 'fixed' | 'in_house', inHouse = table) {
  const method = genericMethod({ replace: [['  outlier_test: grubbs', `  limits: ${limits}\n  outlier_test: grubbs`]] });
  return recalculateTable(rawTable(rows), {
    method,
    worklist: { path: 'm.csv', name: 'm.csv', bytes: 0, sha256: '' },
    inHouse,
  });
}

describe('a method may judge controls by in-house limits from the QC history', () => {
  it('the in-house control limits are mean ± 3s of the history (REFERENCES.md §2: 86.83–109.97 %)', () => {
    expect(own.controlLow).toBeCloseTo(86.83, 2);
    expect(own.controlHigh).toBeCloseTo(109.97, 2);
  });

  it('qc.limits: in_house uses them, and says so in the limits that judged the row', () => {
    const r = judge('in_house');
    expect(r.rowFlags[0]).toBe('REC_HIGH');
    expect(r.qc.status[0]).toBe('fail');
    expect(r.qc.limits[0]!.recovery![1]).toBeCloseTo(109.97, 2);
    expect(r.qc.limits[0]!.origin).toMatch(/in-house control limits \(mean ± 3s of 20 lcs points/);
  });

  it('qc.limits: fixed (the default) keeps the method limits even with a history', () => {
    const r = judge('fixed');
    expect(r.rowFlags[0]).toBe('');
    expect(r.qc.limits[0]!.recovery).toEqual([70, 130]);
  });

  it('in_house without enough history falls back to the fixed limits', () => {
    const r = judge('in_house', new Map());
    expect(r.rowFlags[0]).toBe('');
    expect(r.qc.limits[0]!.origin).toMatch(/method lcs/);
  });
});
