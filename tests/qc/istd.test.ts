import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { recalculateData } from '../../src/index.js';
import { parseMethod } from '../../src/method/load.js';

/**
 * Issue 14, point 3: each row's internal-standard response against the mean response of its
 * batch and analyte's reference rows; outside 50–150 % (common practice, no single published
 * source) the row is flagged ISTD_RESPONSE, which fails a control. Limits inclusive, as every
 * limit in phasebook (qc/compare.ts).
 */
const generic = readFileSync('templates/generic-lle.yaml', 'utf8');
const withIstd = (block: string) => parseMethod(generic.replace('qc:\n  outlier_test', `${block}\nqc:\n  outlier_test`), { file: 'inline.yaml' });
const calibratorsOnly = withIstd('internal_standard:\n  reference: [calibrator]\n');
const HEADER = 'sample_id,sample_type,batch_id,analyte,extract_conc,sample_volume,solvent_volume,extractions,final_volume,spike_conc,qc_level,istd_response';
const row = (id: string, type: string, batch: string, response: string, spike = '') =>
  `${id},${type},${batch},tracer,10,100,10,1,1,${spike},${type === 'qc' ? 'mid' : ''},${response}`;
// Two calibrators at 1000 and 1200: the reference mean of batch B1 is 1100.
const calibrators = [row('CAL-1', 'calibrator', 'B1', '1000'), row('CAL-2', 'calibrator', 'B1', '1200')];

async function run(rows: string[], method = calibratorsOnly) {
  const result = await recalculateData([HEADER, ...rows].join('\n'), { method, name: 'istd' });
  const ids = result.table.texts.get('sample_id')!;
  const at = (id: string) => ids.indexOf(id);
  return {
    result,
    flags: (id: string) => result.rowFlags[at(id)],
    status: (id: string) => result.qc.status[at(id)],
    notes: (id: string) => result.notes.filter((n) => n.row === at(id)).map((n) => n.message),
    flag: (id: string) => result.flags.find((f) => f.row === at(id) && f.code === 'ISTD_RESPONSE'),
  };
}

describe('internal-standard response', () => {
  it.each([
    ['549 of 1100 is 49.9 %: below the window', '549', 'ISTD_RESPONSE', 'fail'],
    ['550 of 1100 is 50 %: on the limit, inside', '550', '', 'pass'],
    ['1650 of 1100 is 150 %: on the limit, inside', '1650', '', 'pass'],
    ['1651 of 1100 is 150.1 %: above the window', '1651', 'ISTD_RESPONSE', 'fail'],
  ])('a qc row at %s', async (_what, response, flags, status) => {
    const r = await run([...calibrators, row('QC-1', 'qc', 'B1', response, '0.1')]);
    expect(r.flags('QC-1')).toBe(flags);
    expect(r.status('QC-1')).toBe(status);
  });

  it('names the response, its percent, the reference and the window', async () => {
    const r = await run([...calibrators, row('QC-1', 'qc', 'B1', '440', '0.1')]);
    expect(r.flag('QC-1')).toMatchObject({
      column: 'istd_response',
      value: 40,
      limit: '50–150 %',
      message: 'row 4, column "istd_response": internal-standard response 440 is 40 % of the mean 1100 of this batch\'s calibrator rows: expected 50–150 %',
    });
  });

  it('flags a sample without giving it a status, and the verdict sentence says so', async () => {
    const r = await run([...calibrators, row('S-1', 'sample', 'B1', '300')]);
    expect(r.flags('S-1')).toBe('ISTD_RESPONSE');
    expect(r.status('S-1')).toBe('');
    expect(r.result.verdict.headline.sentence).toContain('1 sample result has an internal-standard response outside its window');
  });

  it('leaves a row with no response unjudged and silent (a double blank has no internal standard)', async () => {
    const r = await run([...calibrators, row('DB-1', 'blank', 'B1', '')]);
    expect(r.flags('DB-1')).toBe('');
    expect(r.notes('DB-1').filter((n) => n.includes('internal-standard'))).toEqual([]);
  });

  it('says a response is not judged when its batch has no reference row with a response', async () => {
    const r = await run([...calibrators, row('S-9', 'sample', 'B2', '300')]);
    expect(r.flags('S-9')).toBe('');
    expect(r.notes('S-9')).toContain('internal-standard response not judged: no calibrator row of this batch and analyte has a response to compare it with');
  });

  it('takes the mean of calibrators and qc rows by default, the row itself included', async () => {
    // Mean of 1000, 1200 and 500 is 900; 500 / 900 = 55.6 %: inside. With calibrators only it would be 45.5 %.
    const rows = [...calibrators, row('QC-1', 'qc', 'B1', '500', '0.1')];
    expect((await run(rows, withIstd(''))).flags('QC-1')).toBe('');
    expect((await run(rows)).flags('QC-1')).toBe('ISTD_RESPONSE');
  });

  it('uses the window the method gives', async () => {
    const narrow = withIstd('internal_standard:\n  window: [70, 130]\n  reference: [calibrator]\n');
    const r = await run([...calibrators, row('QC-1', 'qc', 'B1', '700', '0.1')], narrow); // 63.6 %
    expect(r.flags('QC-1')).toBe('ISTD_RESPONSE');
    expect(r.flag('QC-1')!.limit).toBe('70–130 %');
  });
});
