/**
 * Summary per batch and analyte (issue 3 §9), through the whole stage chain.
 */
import { describe, expect, it } from 'vitest';
import { run, type Row } from '../fixtures/qc/build.js';

// REFERENCES.md §2 constructed check (US EPA SW-846 control-chart practice): 20 LCS recoveries,
// mean 98.40, s (n − 1) = 3.8580.
const LCS_20 = [95, 102, 98, 91, 105, 99, 97, 100, 94, 103, 96, 101, 99, 92, 104, 98, 100, 97, 95, 102];

describe('recovery statistics per control type', () => {
  const r = run(LCS_20.map((x, i): Row => ({ sample_id: `LCS-${i + 1}`, sample_type: 'lcs', extract_conc: x, spike_conc: 100 })));
  const g = r.groups[0]!;

  it('gives n, mean, SD, %RSD, min and max of the 20 lcs recoveries', () => {
    expect(g.recoveries).toHaveLength(1);
    const s = g.recoveries[0]!;
    expect(s).toMatchObject({ type: 'lcs', level: '', n: 20, min: 91, max: 105, outside: 0 });
    expect(s.mean).toBeCloseTo(98.4, 10);
    expect(Math.abs(s.sd - 3.858)).toBeLessThan(1e-4);
    expect(s.rsdPct).toBeCloseTo((100 * s.sd) / 98.4, 10);
    expect(g.counts.lcs).toBe(20);
    expect(g.verdict).toBe('pass');
  });
});

describe('one batch and analyte with every kind of row', () => {
  const rows: Row[] = [
    // samples: E from the Harvey example K = 5, 50 mL + 15 mL → 60.0 %, and Harris example K = 3,
    // 100 mL + 500 mL → 93.75 % (REFERENCES.md §1, E3 and E1a).
    { sample_id: 'S1', extract_conc: 3, partition_coeff: 5, sample_volume: 50, solvent_volume: 15 },
    { sample_id: 'S2', extract_conc: 2, partition_coeff: 3, sample_volume: 100, solvent_volume: 500 },
    { sample_id: 'MB', sample_type: 'blank', extract_conc: 0.1, reporting_limit: 0.5 },
    { sample_id: 'L', sample_type: 'lcs', extract_conc: 6, spike_conc: 10 }, // 60 % → REC_LOW
    { sample_id: 'LD', sample_type: 'lcsd', parent_id: 'L', extract_conc: 9, spike_conc: 10 }, // 90 %, RPD 40 %
    { sample_id: 'D', sample_type: 'dup', parent_id: 'S1', extract_conc: 9 }, // RPD against S1's result
    { sample_id: 'Q1', sample_type: 'qc', qc_level: 'low', extract_conc: 9, spike_conc: 10 },
    { sample_id: 'Q2', sample_type: 'qc', qc_level: 'low', extract_conc: 10, spike_conc: 10 },
    { sample_id: 'Q3', sample_type: 'qc', qc_level: 'low', extract_conc: 11, spike_conc: 10 },
    { sample_id: 'Q4', sample_type: 'qc', qc_level: 'high', extract_conc: 80, spike_conc: 100 }, // 80 % → REC_LOW
    { sample_id: 'Q5', sample_type: 'qc', qc_level: 'high', extract_conc: 100, spike_conc: 100 },
  ];
  const r = run(rows);
  const g = r.groups[0]!;

  it('counts rows by sample type', () => {
    expect(g.counts).toEqual({ sample: 2, blank: 1, lcs: 1, lcsd: 1, ms: 0, msd: 0, dup: 1, qc: 5, mdl: 0, calibrator: 0 });
  });

  it('splits qc recoveries by level, in concentration order, and counts those outside limits', () => {
    expect(g.recoveries.map((s) => [s.type, s.level, s.n, s.outside])).toEqual([
      ['lcs', '', 1, 1],
      ['lcsd', '', 1, 0],
      ['qc', 'low', 3, 0],
      ['qc', 'high', 2, 1],
    ]);
    const low = g.recoveries.find((s) => s.level === 'low')!;
    expect([low.mean, low.sd, low.min, low.max]).toEqual([100, 10, 90, 110]);
    expect(g.recoveries[0]!.sd).toBeNaN(); // one value has no SD
  });

  it('gives precision (%CV of concentrations) per qc level, in concentration order (ICH M10 within-run precision)', () => {
    expect(g.precision).toEqual([
      { level: 'low', n: 3, meanConc: 10, sdConc: 1, cvPct: 10 },
      { level: 'high', n: 2, meanConc: 90, sdConc: Math.sqrt(200), cvPct: (100 * Math.sqrt(200)) / 90 },
    ]);
  });

  it('gives the largest RPD, the rows outside limits and the blank status', () => {
    // lcsd 9 vs lcs 6: 3/7.5 × 100 = 40 %; dup 9 vs S1, whose result is 3 × 15 mL/(50 mL × 0.60) = 1.5: 142.9 %.
    expect(g.maxRpd).toBeCloseTo((Math.abs(9 - 1.5) * 200) / (9 + 1.5), 10);
    expect(g.outsideLimits).toBe(4); // L (REC_LOW), LD (RPD_HIGH), D (RPD_HIGH), Q4 (REC_LOW)
    expect(g.blankStatus).toBe('clean');
  });

  it('gives the mean theoretical extraction efficiency over the rows', () => {
    // 60 % and 93.75 % on the samples, 100 % (no K) on the other 9 rows.
    expect(g.meanEfficiencyPct).toBeCloseTo((60 + 93.75 + 9 * 100) / 11, 10);
  });

  it('fails the verdict for the failed lcs and pairs, not for the qc row the run rule accepts', () => {
    expect(g.failedControls).toBe(4);
    expect(g.verdict).toBe('fail');
    expect(g.reasons).toEqual(['REC_LOW: lcs "L"', 'RPD_HIGH: lcsd "LD", dup "D"']);
    expect(g.runRule?.accepted).toBe(true);
    expect(g.notes).toEqual(['run rule accepts the run with 4 of 5 qc rows passing; failed: qc "Q4" (REC_LOW)']);
  });

  it('reports a blank hit as the blank status', () => {
    const hit = run([{ sample_id: 'MB', sample_type: 'blank', extract_conc: 0.5, reporting_limit: 0.5 }]);
    expect(hit.groups[0]!.blankStatus).toBe('hit');
    expect(run([{ sample_id: 'S', extract_conc: 1 }]).groups[0]!.blankStatus).toBe('none');
  });
});

describe('groups and batches', () => {
  it('makes one group per (batch, analyte) in order of first appearance and a verdict per batch', () => {
    const r = run([
      { sample_id: 'S', extract_conc: 1, batch_id: 'B2' },
      { sample_id: 'S', extract_conc: 1, analyte: 'simazine' },
      { sample_id: 'L', sample_type: 'lcs', extract_conc: 1, spike_conc: 10, analyte: 'simazine' },
      { sample_id: 'S', extract_conc: 1 },
    ]);
    expect(r.groups.map((g) => `${g.batch}/${g.analyte}/${g.verdict}`)).toEqual(['B2/atrazine/pass', 'B1/simazine/fail', 'B1/atrazine/pass']);
    expect(r.verdict.batches.map(({ headline, ...rest }) => rest)).toEqual([
      { batch: 'B2', verdict: 'pass', reasons: [] },
      { batch: 'B1', verdict: 'fail', reasons: ['simazine: REC_LOW: lcs "L"'] },
    ]);
    expect(r.verdict.batches.map((b) => `${b.headline.label}: ${b.headline.sentence}`)).toEqual([
      'PASS: no control row was judged: the worklist has none, so nothing here checks the extraction',
      'FAIL: 1 control failed',
    ]);
    expect(r.verdict.reasons).toEqual(['batch B1, simazine: REC_LOW: lcs "L"']);
  });

  it('names an input error on a row without an analyte', () => {
    const r = run([{ sample_id: 'S', extract_conc: 1, analyte: '' }]);
    expect(r.verdict.reasons).toEqual(['batch B1, (no analyte): INPUT_ERROR: sample "S"']);
  });
});
