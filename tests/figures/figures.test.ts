import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { computeFigures, defaultPeriod, figuresJson, rowsInPeriod, settingsFromHistory, settingsOf } from '../../src/figures/figures.js';
import type { HistoryRow } from '../../src/history/records.js';
import { historyRow } from '../helpers/history-rows.js';
import { parseMethod } from '../../src/method/load.js';
import type { StopError } from '../../src/errors.js';
import { readFileSync } from 'node:fs';
import { resolve } from 'node:path';

const row = historyRow;

const TYPES = ['lcs', 'ms', 'msd', 'qc', 'mdl', 'blank'] as const;
const arbRow = fc
  .record({
    sampleType: fc.constantFrom(...TYPES),
    analyte: fc.constantFrom('Atrazine', 'Simazine'),
    methodName: fc.constantFrom('m1', 'm2'),
    qcLevel: fc.constantFrom('low', 'high'),
    // Decimals with full mantissas (a sum of them depends on the order it is taken in, unless the code sorts first).
    value: fc.integer({ min: -500, max: 20_000 }).map((i) => i / 97.3),
    nondetect: fc.boolean(),
    runId: fc.integer({ min: 1, max: 40 }),
  })
  .map((r) =>
    row({
      sampleType: r.sampleType,
      analyte: r.analyte,
      methodName: r.methodName,
      qcLevel: r.sampleType === 'qc' ? r.qcLevel : '',
      runId: r.runId,
      recoveryPct: ['lcs', 'ms', 'msd', 'qc', 'mdl'].includes(r.sampleType) ? r.value : NaN,
      result: r.nondetect && (r.sampleType === 'blank' || r.sampleType === 'mdl') ? NaN : r.value / 100,
      nondetect: r.nondetect && (r.sampleType === 'blank' || r.sampleType === 'mdl'),
    }),
  );

/** Enough points in m1 for Atrazine's U and MDL_s, whatever the random rows add. */
const BASE: HistoryRow[] = [
  ...[97.1, 103.3, 99.7].map((v) => row({ sampleType: 'lcs', analyte: 'Atrazine', methodName: 'm1', recoveryPct: v })),
  ...[94.9, 106.2].map((v) => row({ sampleType: 'ms', analyte: 'Atrazine', methodName: 'm1', recoveryPct: v })),
  ...[0.31, 0.27, 0.35, 0.29, 0.33, 0.26, 0.37].map((v) => row({ sampleType: 'mdl', analyte: 'Atrazine', methodName: 'm1', result: v })),
];

describe('figures do not depend on the order runs were recorded in', () => {
  it('gives the same figures, to the last bit, for any order of the same rows', () => {
    const settings = new Map([
      ['m1', { ...settingsOf(undefined, 'defaults'), minPointsRw: 3, minPointsBias: 2 }],
      ['m2', { ...settingsOf(undefined, 'defaults'), minPointsRw: 2, minPointsBias: 2 }],
    ]);
    fc.assert(
      fc.property(
        fc
          .array(arbRow, { minLength: 20, maxLength: 240 })
          .map((rows) => [...BASE, ...rows])
          .chain((rows) => fc.tuple(fc.constant(rows), fc.shuffledSubarray(rows, { minLength: rows.length, maxLength: rows.length }))),
        ([rows, shuffled]) => {
          const before = figuresJson(computeFigures(rows, settings));
          // The base rows give m1's Atrazine a U, and an MDL_s unless a random spike was not detected
          // (else the property could hold trivially).
          const base = before.find((f) => f.method === 'm1' && f.analyte === 'Atrazine')!;
          expect(base.uncertainty.U_pct).not.toBeNull();
          const spikesNotDetected = rows.some((r) => r.methodName === 'm1' && r.analyte === 'Atrazine' && r.sampleType === 'mdl' && r.nondetect);
          expect(base.mdl.mdl_s === null).toBe(spikesNotDetected);
          expect(figuresJson(computeFigures(shuffled, settings))).toEqual(before);
        },
      ),
      { numRuns: 100 },
    );
  });
});

describe('which points count', () => {
  const lcs = (v: number) => row({ sampleType: 'lcs', analyte: 'Atrazine', recoveryPct: v });
  it('counts every lcs recovery, failed ones too, and skips rows without one', () => {
    const rows = [lcs(90), lcs(110), { ...lcs(140), status: 'fail' as const, flags: 'REC_HIGH' }, lcs(NaN)];
    const [e] = computeFigures(rows, new Map([['lab-method', { ...settingsOf(undefined, 'defaults'), minPointsRw: 3 }]]));
    expect(e!.uncertainty.nRw).toBe(3);
    // s of 90, 110, 140 (hand): mean 113.33, Σd² = 544.44 + 11.11 + 711.11 = 1266.67, s² = 633.33
    expect(e!.uncertainty.uRwPct).toBeCloseTo(Math.sqrt(1900 / 3), 9);
  });

  it('gives each qc level its own u(Rw) and bias', () => {
    const rows = [
      ...[98, 102, 100].map((v) => row({ sampleType: 'qc', analyte: 'Amitriptyline', qcLevel: 'Low', recoveryPct: v })),
      ...[90, 94].map((v) => row({ sampleType: 'qc', analyte: 'Amitriptyline', qcLevel: 'high', recoveryPct: v })),
    ];
    const [e] = computeFigures(rows, new Map([['lab-method', { ...settingsOf(undefined, 'defaults'), minPointsRw: 2, minPointsBias: 2 }]]));
    expect(e!.levels.map((l) => [l.level, l.uncertainty.nRw])).toEqual([
      ['low', 3],
      ['high', 2],
    ]);
    // high: mean 92 → bias 8; s² = 8, (s/√n)² = 4 → u(bias) = √(64 + 4) (hand)
    expect(e!.levels[1]!.uncertainty.uBiasPct).toBeCloseTo(Math.sqrt(68), 12);
  });

  it('leaves out blanks recorded before schema version 3 (their result is unknown) and says how many', () => {
    const rows = [row({ sampleType: 'blank', analyte: 'Atrazine', nondetect: undefined }), row({ sampleType: 'blank', analyte: 'Atrazine', result: 0.01 })];
    const [e] = computeFigures(rows, new Map());
    expect(e!.pointsWithoutResult).toBe(1);
    expect(e!.mdl.nBlanks).toBe(1);
  });

  it('refuses a detection limit over results recorded in more than one unit', () => {
    const rows = [
      ...Array.from({ length: 7 }, (_, i) => row({ sampleType: 'mdl', analyte: 'Atrazine', result: 0.1 + i / 100, concentrationUnit: i < 4 ? 'ug/L' : 'ng/mL' })),
      ...Array.from({ length: 7 }, () => row({ sampleType: 'blank', analyte: 'Atrazine', nondetect: true })),
    ];
    const [e] = computeFigures(rows, new Map());
    expect(e!.mdl.mdl).toBeNaN();
    expect(e!.mdl.reasons).toEqual(['the results were recorded in more than one unit ("ug/L", "ng/mL"): no detection limit']);
  });

  it('gives a surrogate analyte no figures', () => {
    const method = parseMethod(
      `${readFileSync(resolve('templates/generic-lle.yaml'), 'utf8')}\nanalytes:\n  D5-Atrazine: { surrogate: true }\n`,
      { file: 'm.yaml' },
    );
    const rows = [row({ sampleType: 'lcs', analyte: 'D5-Atrazine', recoveryPct: 99, methodName: 'generic-lle', methodSha256: method.sha256 })];
    const settings = settingsFromHistory(rows, new Map([[method.sha256, { sha256: method.sha256, name: method.name, text: method.text }]]));
    expect(computeFigures(rows, settings)).toEqual([]);
  });
});

describe('settings from the history', () => {
  it('reads what the latest recorded method text asks for', () => {
    const text = `${readFileSync(resolve('templates/generic-lle.yaml'), 'utf8')}\nfigures: { min_points_rw: 8, min_points_bias: 3 }\nanalytes:\n  Atrazine: { spike_uncertainty_pct: 0.8, expanded_uncertainty_pct: 15 }\n`;
    const method = parseMethod(text, { file: 'm.yaml' });
    const rows = [row({ sampleType: 'lcs', analyte: 'Atrazine', methodName: 'generic-lle', methodSha256: method.sha256, recoveryPct: 100 })];
    const s = settingsFromHistory(rows, new Map([[method.sha256, { sha256: method.sha256, name: 'generic-lle', text }]])).get('generic-lle')!;
    expect(s).toMatchObject({ minPointsRw: 8, minPointsBias: 3 });
    expect(s.analytes.get('atrazine')).toEqual({ spikeUncertaintyPct: 0.8, expandedUncertaintyPct: 15, surrogate: false });
    expect(s.source).toMatch(/^the method as recorded with its latest run \(SHA-256 [0-9a-f]{12}…\)$/);
  });

  it.each([
    ['figures: { min_points_rw: 1 }', 'figures.min_points_rw'],
    ['figures: { min_points_bias: 1 }', 'figures.min_points_bias'],
    ['analytes:\n  Atrazine: { spike_uncertainty_pct: -1 }', 'analytes.Atrazine.spike_uncertainty_pct'],
    ['analytes:\n  Atrazine: { expanded_uncertainty_pct: 0 }', 'analytes.Atrazine.expanded_uncertainty_pct'],
  ])('refuses a method with %j, naming the key', (extra, key) => {
    let message = '';
    try {
      parseMethod(`${readFileSync(resolve('templates/generic-lle.yaml'), 'utf8')}\n${extra}\n`, { file: 'm.yaml' });
    } catch (err) {
      message = (err as StopError).describe();
    }
    expect(message).toContain(`key "${key}"`);
  });

  it('says what a minimum must be', () => {
    expect(() => parseMethod(`${readFileSync(resolve('templates/generic-lle.yaml'), 'utf8')}\nfigures: { min_points_bias: 1 }\n`, { file: 'm.yaml' })).toThrow(
      'must be >= 2, got 1',
    );
  });

  it('falls back to the defaults, and says so, for a history without method texts', () => {
    const s = settingsFromHistory([row({ sampleType: 'lcs', analyte: 'Atrazine' })], new Map()).get('lab-method')!;
    expect(s).toMatchObject({ minPointsRw: 20, minPointsBias: 6, source: 'defaults: the history holds no text of this method (runs recorded before schema version 3)' });
  });
});

describe('the period', () => {
  it('is the 24 calendar months up to the given time by default (the procedure\'s "last 24 months")', () => {
    expect(defaultPeriod(new Date('2026-12-04T21:00:00Z'))).toEqual({ since: '2024-12-04T21:00:00.000Z', until: '2026-12-04T21:00:00.000Z' });
  });

  it('keeps the runs inside it, both ends included', () => {
    const rows = ['2024-12-04T20:59:59.999Z', '2024-12-04T21:00:00.000Z', '2026-12-04T21:00:00.000Z', '2026-12-04T21:00:00.001Z'].map((t) =>
      row({ sampleType: 'lcs', analyte: 'A', runTime: t }),
    );
    expect(rowsInPeriod(rows, { since: '2024-12-04T21:00:00.000Z', until: '2026-12-04T21:00:00.000Z' }).map((r) => r.runTime)).toEqual([
      '2024-12-04T21:00:00.000Z',
      '2026-12-04T21:00:00.000Z',
    ]);
  });
});
