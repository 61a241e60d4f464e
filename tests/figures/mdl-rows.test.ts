import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { recalculateData } from '../../src/memory.js';
import { parseMethod } from '../../src/method/load.js';

// Sample type mdl (DESIGN.md §4): a low-level spiked blank, computed like an lcs (found/spike × 100),
// judged only by recovery limits the method gives for it. Invented rows; sample_volume 100 mL and
// final_volume 1 mL make the result extract_conc / 100 (E = 100 %), spike 0.05 ng/mL.
const GENERIC = readFileSync(resolve('templates/generic-lle.yaml'), 'utf8');
const rows = (extract: string, spike = '0.05') => [
  { sample_id: 'M1', sample_type: 'MDL Spike', analyte: 'Atrazine', extract_conc: extract, sample_volume: 100, solvent_volume: 10, final_volume: 1, spike_conc: spike },
];
const run = (extra: string, extract: string, spike?: string) =>
  recalculateData(rows(extract, spike), { method: parseMethod(`${GENERIC}\nsample_types:\n  MDL Spike: mdl\n${extra}`, { file: 'm.yaml' }) });

describe('mdl rows', () => {
  it('map from a lab code, compute a recovery and pass when the method gives no limits for them', async () => {
    const r = await run('', '3.0');
    expect(r.table.sampleType[0]).toBe('mdl');
    // 3.0/100 = 0.03 ng/mL of a 0.05 spike: 60 % (hand)
    expect(r.computed.get('spike_recovery_pct')![0]).toBeCloseTo(60, 12);
    expect(r.qc.status[0]).toBe('pass');
  });

  it.each([
    ['3.0', 'fail', 'REC_LOW'],
    ['4.5', 'pass', ''],
    ['ND', 'fail', 'REC_LOW;NOT_DETECTED'],
  ])('are judged by the limits of type mdl when given (extract %s)', async (extract, status, flags) => {
    const r = await run('analytes:\n  Atrazine:\n    limits:\n      mdl: { recovery: [70, 130] }\n', extract);
    expect(r.qc.status[0]).toBe(status);
    expect(r.rowFlags[0]).toBe(flags);
  });

  it('need their spike, like every spiked control', async () => {
    const r = await run('', '3.0', '');
    expect(r.flags.map((f) => f.message)).toEqual(['row 2, column "spike_conc": expected a spike concentration above 0 for an mdl row, got an empty cell']);
  });
});
