import { createHash } from 'node:crypto';
import { copyFileSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { registerTrendsCommand } from '../../src/commands/trends.js';
import { runCommand } from '../helpers/command.js';
import { StopError } from '../../src/errors.js';
import type { HistoryRow } from '../../src/history/records.js';
import { buildTrends, inHouseLimitsOf, readTrends, trendsIncludingRun, trendsJson, type TrendJson } from '../../src/history/trends.js';
import { inHouseKey } from '../../src/qc/limits.js';
import { REFERENCE_LCS, lcsHistories, lcsRun, recalcRows, runTime } from '../report/fixtures.js';

const JSON_KEYS = ['analyte', 'sample_type', 'qc_level', 'n', 'mean', 'sd', 'warning_low', 'warning_high', 'control_low', 'control_high', 'rules'];

let dir: string;
/** 20 runs, LCS recoveries REFERENCE_LCS in run order. */
let twenty: string;
/** The same 20, then two more at 112 and 113 %. */
let twentyTwo: string;
/** The first 19 runs only. */
let nineteen: string;
const sha = (path: string) => createHash('sha256').update(readFileSync(path)).digest('hex');

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'phasebook-trends-'));
  ({ nineteen, twenty, twentyTwo } = await lcsHistories(dir));
}, 120_000);

afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('trends from a recorded history', () => {
  it('gives the in-house limits of REFERENCES.md §2 for its 20 LCS recoveries', async () => {
    const json = trendsJson(await readTrends(twenty));
    // The blank carries no recovery, so only the LCS series appears.
    expect(json).toHaveLength(1);
    const lcs = json[0]!;
    expect(Object.keys(lcs)).toEqual(JSON_KEYS);
    expect(lcs).toMatchObject({ analyte: 'Atrazine', sample_type: 'lcs', n: 20, rules: [] });
    // REFERENCES.md §2 constructed check: mean 98.40, s (n − 1) 3.8580 → LCL 86.83, LWL 90.68, UWL 106.12, UCL 109.97.
    expect(lcs.mean).toBeCloseTo(98.4, 9);
    expect(lcs.sd).toBeCloseTo(3.858, 3);
    expect(lcs.control_low).toBeCloseTo(86.83, 2);
    expect(lcs.warning_low).toBeCloseTo(90.68, 2);
    expect(lcs.warning_high).toBeCloseTo(106.12, 2);
    expect(lcs.control_high).toBeCloseTo(109.97, 2);
  });

  it('sets no limits and judges no rule below 20 points (US EPA SW-846 Method 8000 practice)', async () => {
    const [lcs] = trendsJson(await readTrends(nineteen));
    // Mean and SD of the first 19 values, from Python's statistics.mean and statistics.stdev.
    expect(lcs).toEqual({
      analyte: 'Atrazine',
      sample_type: 'lcs',
      qc_level: null,
      n: 19,
      mean: expect.closeTo(98.21052631578948, 9),
      sd: expect.closeTo(3.8669388893889964, 9),
      warning_low: null,
      warning_high: null,
      control_low: null,
      control_high: null,
      rules: [],
    });
  });

  it('names the Westgard rules broken, with batch id and value', async () => {
    const [lcs] = trendsJson(await readTrends(twentyTwo));
    // Python statistics over the 22 values: mean 99.6818, s 5.5411 → +2s 110.764, +3s 116.305.
    // 112 and 113 are both beyond +2s (not +3s): 1-2s at each, 2-2s at the second (Westgard et al. 1981).
    expect(lcs!.mean).toBeCloseTo(99.68181818181819, 9);
    expect(lcs!.sd).toBeCloseTo(5.541070582790225, 9);
    expect(lcs!.warning_high).toBeCloseTo(110.76395934739864, 9);
    expect(lcs!.control_high).toBeCloseTo(116.30502993018887, 9);
    expect(lcs!.rules.map((r) => ({ rule: r.rule, run: r.run, batch_id: r.batch_id, value: r.value, qc_level: r.qc_level }))).toEqual([
      { rule: '1-2s', run: 21, batch_id: 'B21', value: expect.closeTo(112, 9), qc_level: null },
      { rule: '1-2s', run: 22, batch_id: 'B22', value: expect.closeTo(113, 9), qc_level: null },
      { rule: '2-2s', run: 22, batch_id: 'B22', value: expect.closeTo(113, 9), qc_level: null },
    ]);
  });
});

/** History rows without a database, for the grouping and ordering rules. */
function row(over: Partial<HistoryRow>): HistoryRow {
  return {
    runId: 1,
    runTime: runTime(1),
    worklistName: 'w.csv',
    worklistSha256: 'a'.repeat(64),
    methodName: 'm',
    methodSha256: 'b'.repeat(64),
    rowNumber: 2,
    sampleId: 'S',
    batchId: 'B1',
    analyte: 'Atrazine',
    sampleType: 'lcs',
    qcLevel: '',
    recoveryPct: 100,
    rpdPct: NaN,
    status: 'pass',
    recoveryLow: 70,
    recoveryHigh: 130,
    flags: '',
    ...over,
  };
}

describe('buildTrends', () => {
  it('makes one series per analyte, sample type and QC level, sorted by analyte, type, then level in concentration order, skipping rows without a recovery', () => {
    const series = buildTrends([
      row({ analyte: 'Simazine', sampleType: 'ms' }),
      row({ analyte: 'Atrazine', sampleType: 'qc', qcLevel: 'high' }),
      row({ analyte: 'Atrazine', sampleType: 'qc', qcLevel: 'Low' }),
      row({ analyte: 'Atrazine', sampleType: 'qc', qcLevel: 'low ' }),
      row({ analyte: 'Atrazine', sampleType: 'qc', qcLevel: 'LLOQ' }),
      row({ analyte: 'Atrazine', sampleType: 'lcs' }),
      row({ analyte: 'Atrazine', sampleType: 'blank', recoveryPct: NaN }),
      row({ analyte: 'Atrazine', sampleType: 'dup', recoveryPct: NaN, rpdPct: 4 }),
    ]);
    // Each QC level is its own series (issue 14), levels compared without case or spaces.
    expect(series.map((s) => [s.analyte, s.sampleType, s.level, s.points.length])).toEqual([
      ['Atrazine', 'lcs', '', 1],
      ['Atrazine', 'qc', 'lloq', 1],
      ['Atrazine', 'qc', 'low', 2],
      ['Atrazine', 'qc', 'high', 1],
      ['Simazine', 'ms', '', 1],
    ]);
  });

  it('gives each QC level in-house limits of its own', () => {
    // REFERENCES.md §2's 20 LCS recoveries as the low QC, and the same shifted up by 10 as the high QC:
    // mean 98.40 and 108.40, the same s 3.8580, so control limits 86.83–109.97 and 96.83–119.97.
    const rows = REFERENCE_LCS.flatMap((v, i) => [
      row({ sampleType: 'qc', qcLevel: 'Low', recoveryPct: v, runId: i + 1, batchId: `B${i}` }),
      row({ sampleType: 'qc', qcLevel: 'high', recoveryPct: v + 10, runId: i + 1, batchId: `B${i}` }),
    ]);
    const limits = inHouseLimitsOf(rows);
    expect(limits.get(inHouseKey('Atrazine', 'qc', 'low'))).toMatchObject({ low: expect.closeTo(86.83, 2), high: expect.closeTo(109.97, 2), n: 20 });
    expect(limits.get(inHouseKey('Atrazine', 'qc', 'HIGH'))).toMatchObject({ low: expect.closeTo(96.83, 2), high: expect.closeTo(119.97, 2), n: 20 });
    expect(limits.get(inHouseKey('Atrazine', 'qc'))).toBeUndefined();
  });

  it('honours a smaller minimum for limits when asked', () => {
    const rows = [95, 105, 100].map((v, i) => row({ recoveryPct: v, batchId: `B${i}`, runId: i + 1 }));
    expect(trendsJson(buildTrends(rows))[0]!.warning_low).toBeNull();
    // mean 100, s = 5 (by hand: deviations −5, 5, 0; Σd² = 50; 50/2 = 25) → warning 90–110, control 85–115.
    expect(trendsJson(buildTrends(rows, { minPoints: 3 }))[0]).toMatchObject({ warning_low: 90, warning_high: 110, control_low: 85, control_high: 115 });
  });

  it('applies R-4s within one batch of one run only', () => {
    // 16 points at 100 ± 1, then one run with two LCS 112 and 88 in batch B9: beyond +2s and −2s of that series.
    const base = Array.from({ length: 18 }, (_, i) => row({ recoveryPct: i % 2 ? 101 : 99, runId: i + 1, batchId: `B${i}` }));
    const same = [...base, row({ recoveryPct: 112, runId: 30, batchId: 'B9' }), row({ recoveryPct: 88, runId: 30, batchId: 'B9' })];
    const apart = [...base, row({ recoveryPct: 112, runId: 30, batchId: 'B9' }), row({ recoveryPct: 88, runId: 31, batchId: 'B9' })];
    const r4 = (rows: HistoryRow[]) => trendsJson(buildTrends(rows))[0]!.rules.filter((r) => r.rule === 'R-4s');
    expect(r4(same)).toEqual([{ rule: 'R-4s', run: 30, run_time: runTime(1), worklist: 'w.csv', batch_id: 'B9', sample_id: 'S', row: 2, qc_level: null, value: 88 }]);
    expect(r4(apart)).toEqual([]);
  });
});

describe('trendsIncludingRun', () => {
  it('adds this run to the history in memory, without writing the file', async () => {
    const file = join(dir, 'preview.db');
    copyFileSync(twenty, file);
    const before = sha(file);
    const result = await recalcRows(dir, 'run-21.csv', lcsRun(21, 112));
    const series = await trendsIncludingRun(file, result, { run: { timestamp: runTime(21) } });
    expect(series[0]!.points.map((p) => p.batchId).slice(-2)).toEqual(['B20', 'B21']);
    expect(series[0]!.limits.n).toBe(21);
    expect(sha(file)).toBe(before);
  });

  it('does not count a run twice when it is already recorded', async () => {
    const result = await recalcRows(dir, 'run-20.csv', lcsRun(20, REFERENCE_LCS[19]!));
    const series = await trendsIncludingRun(twenty, result, { run: { timestamp: runTime(20) } });
    expect(series[0]!.limits.n).toBe(20);
  });

  it('keeps run order when this run is earlier than recorded ones', async () => {
    const result = await recalcRows(dir, 'run-0.csv', lcsRun(0, 100));
    const series = await trendsIncludingRun(twenty, result, { run: { timestamp: runTime(0) } });
    expect(series[0]!.points.map((p) => p.batchId).slice(0, 2)).toEqual(['B0', 'B1']);
  });

  it('uses this run alone when the history file does not exist yet', async () => {
    const result = await recalcRows(dir, 'run-1.csv', lcsRun(1, 95));
    const series = await trendsIncludingRun(join(dir, 'not-yet.db'), result, { run: { timestamp: runTime(1) } });
    expect(series.map((s) => [s.sampleType, s.limits.n])).toEqual([['lcs', 1]]);
  });
});

describe('the trends command', () => {
  /** Run `phasebook trends ...` in process; a StopError is thrown, as the command throws it. */
  async function run(args: string[]): Promise<{ out: string; code: number | undefined }> {
    const r = await runCommand(registerTrendsCommand, ['trends', ...args]);
    if (r.error) throw r.error;
    return { out: r.stdout, code: r.code };
  }

  it('prints the array of --json objects with exactly the documented keys', async () => {
    const { out, code } = await run(['--history', twentyTwo, '--json']);
    expect(code).toBe(0);
    const json = JSON.parse(out) as TrendJson[];
    expect(json.map((o) => Object.keys(o))).toEqual([JSON_KEYS]);
    expect(json[0]!.rules.map((r) => Object.keys(r))).toEqual([
      ['rule', 'run', 'run_time', 'worklist', 'batch_id', 'sample_id', 'row', 'qc_level', 'value'],
      ['rule', 'run', 'run_time', 'worklist', 'batch_id', 'sample_id', 'row', 'qc_level', 'value'],
      ['rule', 'run', 'run_time', 'worklist', 'batch_id', 'sample_id', 'row', 'qc_level', 'value'],
    ]);
  });

  it('prints n, mean, SD, limits and violations as text', async () => {
    const { out } = await run(['--history', twentyTwo]);
    expect(out).toBe(
      [
        'Atrazine, lcs: n 22, mean 99.68 %, SD 5.54 %',
        '  warning limits 88.60 % to 110.76 % (mean ± 2s)',
        '  control limits 83.06 % to 116.31 % (mean ± 3s)',
        '  Westgard rules:',
        '    1-2s (warning) at run 21 (run-21.csv, 2026-01-21T10:00:00.000Z), batch "B21", sample "B21-LCS", recovery 112.00 %',
        '    1-2s (warning) at run 22 (run-22.csv, 2026-01-22T10:00:00.000Z), batch "B22", sample "B22-LCS", recovery 113.00 %',
        '    2-2s at run 22 (run-22.csv, 2026-01-22T10:00:00.000Z), batch "B22", sample "B22-LCS", recovery 113.00 %',
        '',
      ].join('\n'),
    );
  });

  it('says when a series has too few points for limits', async () => {
    const { out } = await run(['--history', nineteen]);
    expect(out).toBe('Atrazine, lcs: n 19, mean 98.21 %, SD 3.87 %\n  no in-house limits yet: 20 recoveries needed, 19 recorded\n');
  });

  it('filters by analyte, whatever its case', async () => {
    const { out } = await run(['--history', twenty, '--analyte', 'ATRAZINE', '--json']);
    expect((JSON.parse(out) as TrendJson[]).map((o) => o.analyte)).toEqual(['Atrazine']);
  });

  it('stops on an analyte the history does not hold, naming those it does', async () => {
    const err = await run(['--history', twenty, '--analyte', 'Simazine']).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(StopError);
    expect((err as StopError).describe()).toBe(`${twenty}: no control recoveries of analyte "Simazine" in the history; it holds "Atrazine"`);
  });
});
