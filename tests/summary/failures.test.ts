/**
 * The verdict's sentence (issue 14, point 1): each sentence against the counts that
 * make it true and those that make it false. The rule behind "accepted with failed
 * QCs" is ICH M10's run rule (a run may be accepted with some qc rows outside their
 * limits); that the reviewer must still be told which failed is common practice.
 */
import { describe, expect, it } from 'vitest';
import { describeFailedControl, headline, type FailedControl } from '../../src/summary/failures.js';

const counts = (controls: number, failed: number, tolerated: number, inputErrors: number) => ({ controls, failed, tolerated, inputErrors });

describe('headline', () => {
  it.each([
    // verdict, controls, failed, tolerated, input errors → kind, label, sentence
    ['pass', counts(6, 0, 0, 0), 'all-passed', 'PASS', 'every control passed and no row has an input error'],
    ['pass', counts(6, 1, 1, 0), 'accepted-with-failures', 'PASS', 'run accepted with failed QCs: the run rule accepts the run, but 1 qc row failed'],
    ['pass', counts(9, 3, 3, 0), 'accepted-with-failures', 'PASS', 'run accepted with failed QCs: the run rule accepts the run, but 3 qc rows failed'],
    ['pass', counts(0, 0, 0, 0), 'no-controls', 'PASS', 'no control row was judged: the worklist has none, so nothing here checks the extraction'],
    ['fail', counts(6, 1, 0, 0), 'failed', 'FAIL', '1 control failed'],
    ['fail', counts(6, 2, 0, 3), 'failed', 'FAIL', '2 controls failed and 3 rows have an input error'],
    ['fail', counts(6, 0, 0, 1), 'failed', 'FAIL', '1 row has an input error'],
    ['fail', counts(6, 0, 0, 0), 'failed', 'FAIL', 'the run rule rejects the run'],
    ['fail', counts(20000, 12345, 0, 0), 'failed', 'FAIL', '12,345 controls failed'],
  ] as const)('%s with %o is %s', (verdict, c, kind, label, sentence) => {
    expect(headline(verdict, c)).toEqual({ kind, label, sentence });
  });

  it('never says every control passed when one failed, whatever the verdict', () => {
    for (const verdict of ['pass', 'fail'] as const) {
      for (const failed of [1, 2, 50]) {
        expect(headline(verdict, counts(60, failed, verdict === 'pass' ? failed : 0, 0)).sentence).not.toContain('every control passed');
      }
    }
  });
});

describe('describeFailedControl', () => {
  const flag = { row: 4, code: 'REC_LOW' as const, column: 'spike_recovery_pct', message: 'row 6, column "spike_recovery_pct": recovery below its limit: expected 85–115 %, got "80 %"', value: 80, limit: 85 };
  const control = (over: Partial<FailedControl>): FailedControl => ({ row: 4, sampleId: 'QL2', batch: 'R1', analyte: 'metoprolol', type: 'qc', level: 'low', findings: [flag], tolerated: false, ...over });

  it.each([
    [control({}), 'qc low "QL2", metoprolol, batch R1: REC_LOW: row 6, column "spike_recovery_pct": recovery below its limit: expected 85–115 %, got "80 %"'],
    [control({ tolerated: true }), 'qc low "QL2", metoprolol, batch R1 (tolerated by the run rule): REC_LOW: row 6, column "spike_recovery_pct": recovery below its limit: expected 85–115 %, got "80 %"'],
    [control({ type: 'lcs', level: '', batch: '', sampleId: 'L1' }), 'lcs "L1", metoprolol: REC_LOW: row 6, column "spike_recovery_pct": recovery below its limit: expected 85–115 %, got "80 %"'],
    [control({ type: '', findings: [] }), 'row of unknown type "QL2", metoprolol, batch R1: failed'],
  ])('names the control, its value and its limit', (c, text) => {
    expect(describeFailedControl(c)).toBe(text);
  });
});
