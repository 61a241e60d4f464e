import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { expandedUncertaintyColumns, uncertaintyTable } from '../../src/qc/uncertainty.js';
import { uncertaintyFromHistory } from '../../src/figures/from-history.js';
import { historyRow } from '../helpers/history-rows.js';
import { parseMethod } from '../../src/method/load.js';

const GENERIC = readFileSync(resolve('templates/generic-lle.yaml'), 'utf8');
const method = (extra = '') => parseMethod(`${GENERIC}\n${extra}`, { file: 'm.yaml' });

const row = (p: Parameters<typeof historyRow>[0]) =>
  historyRow({ runTime: '2026-06-01T10:00:00.000Z', methodName: 'generic-lle', concentrationUnit: 'ng/mL', ...p });

describe('the expanded uncertainty a run applies', () => {
  it("takes a method's fixed U over the history's", () => {
    const m = method('analytes:\n  Atrazine: { expanded_uncertainty_pct: 18 }\n');
    const t = uncertaintyTable(m, new Map([['atrazine', { analyte: 'Atrazine', pct: 11, k: 2, origin: 'history', source: 'h' }]]));
    expect(t.get('atrazine')).toEqual({ analyte: 'Atrazine', pct: 18, k: 2, origin: 'method', source: 'stated by the method (analytes.Atrazine.expanded_uncertainty_pct)' });
  });

  it('gives none for an analyte without enough history (no number rather than a guess)', () => {
    const rows = [95, 105].map((v) => row({ sampleType: 'lcs', analyte: 'Atrazine', recoveryPct: v }));
    expect(uncertaintyFromHistory(rows, { method: method(), until: '2026-12-01T00:00:00Z', historyFile: 'h.db' }).size).toBe(0);
  });

  it('falls back to the largest U of the qc levels, and uses only the run\'s own method and the last 24 months', () => {
    const m = method('figures: { min_points_rw: 2, min_points_bias: 2 }\n');
    const rows = [
      // low: 98, 102 → mean 100, s² = 8 → u(Rw)² = 8, u(bias)² = 0 + 8/2 → U = 2·√12 (hand)
      ...[98, 102].map((v) => row({ sampleType: 'qc', qcLevel: 'low', analyte: 'Amitriptyline', recoveryPct: v })),
      // high: 90, 94 → mean 92, s² = 8 → u(bias)² = 64 + 4 → U = 2·√(8 + 68) = 2·√76 (hand)
      ...[90, 94].map((v) => row({ sampleType: 'qc', qcLevel: 'high', analyte: 'Amitriptyline', recoveryPct: v })),
      // Neither another method's rows nor rows older than 24 months count.
      row({ sampleType: 'qc', qcLevel: 'high', analyte: 'Amitriptyline', recoveryPct: 40, methodName: 'other' }),
      row({ sampleType: 'qc', qcLevel: 'high', analyte: 'Amitriptyline', recoveryPct: 40, runTime: '2024-11-30T00:00:00.000Z' }),
    ];
    const t = uncertaintyFromHistory(rows, { method: m, until: '2026-12-01T00:00:00Z', historyFile: 'h.db' });
    const u = t.get('amitriptyline')!;
    expect(u.pct).toBeCloseTo(2 * Math.sqrt(76), 12);
    expect(u).toMatchObject({ k: 2, origin: 'history' });
    expect(u.source).toBe(
      'Nordtest TR 537 from the QC history h.db, runs of 2024-12-01 to 2026-12-01: the largest of 2 qc levels: high, from 2 recoveries; u(Cref) 0 % (none stated)',
    );
  });

  it('gives each sample result U % × |result| and k, and nothing to other rows', () => {
    const table = new Map([['atrazine', { analyte: 'Atrazine', pct: 12.5, k: 2, origin: 'method' as const, source: '' }]]);
    const { expanded, k } = expandedUncertaintyColumns({
      rowCount: 6,
      sampleType: ['sample', 'sample', 'blank', 'sample', 'sample', 'sample'],
      analyte: ['Atrazine', ' atrazine ', 'Atrazine', 'Simazine', 'Atrazine', 'Atrazine'],
      surrogate: [0, 0, 0, 0, 0, 1],
      result: Float64Array.from([0.8, -0.4, 0.1, 2, NaN, 0.5]),
      table,
    });
    // 12.5 % of 0.8 = 0.1; of |−0.4| = 0.05 (hand)
    expect([...expanded]).toEqual([0.1, 0.05, NaN, NaN, NaN, NaN]);
    expect([...k]).toEqual([2, 2, NaN, NaN, NaN, NaN]);
  });
});
