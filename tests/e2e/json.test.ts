/**
 * `--json` for scripts (issue 18, point 3), through the built CLI: one JSON document on
 * stdout and nothing else there, the exit code unchanged, and a stop described in the
 * document as well as on stderr.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { runCli } from '../helpers/cli.js';

const dir = mkdtempSync(join(tmpdir(), 'phasebook-json-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** The invented worklist of an accepted run with one qc row outside its limits (ICH M10 run rule). */
const ACCEPTED = [
  'sample_id,sample_type,batch_id,analyte,extract_conc,sample_volume,solvent_volume,spike_conc,qc_level',
  'S-1,sample,R1,metoprolol,4.2,1,1,,',
  'QL1,qc,R1,metoprolol,10,1,1,10,low',
  'QL2,qc,R1,metoprolol,8,1,1,10,low',
  'QM1,qc,R1,metoprolol,10,1,1,10,mid',
  'QM2,qc,R1,metoprolol,10.2,1,1,10,mid',
  'QH1,qc,R1,metoprolol,9.9,1,1,10,high',
  'QH2,qc,R1,metoprolol,10.1,1,1,10,high',
].join('\n');

describe('recalc --json', () => {
  it('prints one document: rows, failed controls with value and limit, the verdict, the outputs; exit code as without', () => {
    const worklist = join(dir, 'accepted.csv');
    writeFileSync(worklist, ACCEPTED + '\n');
    const r = runCli(['recalc', worklist, '-m', 'generic-lle', '-o', join(dir, 'out'), '--outputs', 'csv', '--json']);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(''); // the words for people are left out; the document says it all
    const doc = JSON.parse(r.stdout);
    expect(r.stdout.trimEnd().split('\n')).toHaveLength(1);
    expect(doc).toMatchObject({
      exit_code: 1,
      rows_in: 7,
      rows_out: 7,
      input_errors: [],
      failed_controls: [
        {
          row: 4,
          sample_id: 'QL2',
          analyte: 'metoprolol',
          batch: 'R1',
          sample_type: 'qc',
          qc_level: 'low',
          tolerated_by_run_rule: true,
          findings: [{ code: 'REC_LOW', column: 'spike_recovery_pct', value: 80, limit: 85 }],
        },
      ],
      verdict: { verdict: 'pass', label: 'PASS', kind: 'accepted-with-failures' },
      outputs: { csv: [join(dir, 'out', 'accepted.results.csv')], xlsx: [], html: [] },
      history: null,
    });
  });

  it('describes a stop in the document and on stderr, exit 2', () => {
    const r = runCli(['recalc', join(dir, 'missing.csv'), '-m', 'generic-lle', '-o', join(dir, 'out2'), '--json']);
    expect(r.code).toBe(2);
    expect(JSON.parse(r.stdout)).toEqual({
      phasebook: expect.any(String),
      exit_code: 2,
      stopped: {
        kind: 'input',
        message: 'cannot be read: no such file',
        described: `${join(dir, 'missing.csv')}: cannot be read: no such file`,
        file: join(dir, 'missing.csv'),
        line: null,
        column: null,
      },
      nothing_written: true,
    });
    expect(r.stderr).toBe(`phasebook: ${join(dir, 'missing.csv')}: cannot be read: no such file\nNothing was written.\n`);
  });
});

describe('method check --json', () => {
  it('prints the method as loaded and its formula order', () => {
    const r = runCli(['method', 'check', 'surface-water', '--json']);
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.method.name).toBe('surface-water');
    expect(doc.method.units).toEqual({ volume: 'mL', concentration: 'ug/L', extract_concentration: 'ng/mL' });
    expect(doc.formula_order).toEqual(['distribution_ratio', 'extraction_efficiency_pct', 'pre_extraction_conc', 'spike_recovery_pct', 'rpd_pct']);
    expect(doc.method.text).toBeUndefined();
  });
});
