import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { loadMethod } from '../src/method/load.js';
import { recalculateTable } from '../src/pipeline.js';
import type { RawCell } from '../src/read/types.js';
import { CANONICAL_HEADERS, rawTable } from './helpers/raw-table.js';

const method = loadMethod('templates/generic-lle.yaml');
const worklist = { path: 'prop.csv', name: 'prop.csv', bytes: 0, sha256: '' };

// Cells a damaged worklist may hold: good numbers, edge numbers, junk text, formulas, empties.
const cell: fc.Arbitrary<RawCell> = fc.oneof(
  fc.constant(null),
  fc.constant(''),
  fc.double({ noNaN: false }).map((x) => String(x)),
  fc.double({ min: -10, max: 1000, noNaN: true }),
  fc.integer({ min: -3, max: 5 }).map(String),
  fc.constantFrom('sample', 'blank', 'lcs', 'lcsd', 'ms', 'msd', 'dup', 'qc', 'acid', 'base', 'S1', 'S2', 'x', 'y'),
  fc.constantFrom('Infinity', 'NaN', '1e400', '=1+1', '@SUM(A1)', ' +2.5 ', '1,5', '-', 'ten', '\t', '\u0000'),
  fc.string({ maxLength: 12 }),
);

const table = fc
  .integer({ min: 0, max: 25 })
  .chain((n) => fc.array(fc.array(cell, { minLength: CANONICAL_HEADERS.length, maxLength: CANONICAL_HEADERS.length }), { minLength: n, maxLength: n }));

describe('any worklist, valid or not (property-based, fast-check)', () => {
  it('yields exactly as many output rows as input rows, in every output column, and never throws', () => {
    fc.assert(
      fc.property(table, (rows) => {
        const result = recalculateTable(rawTable(CANONICAL_HEADERS, rows), { method, worklist });
        expect(result.rowsOut).toBe(rows.length);
        expect(result.rowFlags).toHaveLength(rows.length);
        expect(result.qc.status).toHaveLength(rows.length);
        for (const col of result.computed.values()) expect(col).toHaveLength(rows.length);
        // A row either computes or says why not.
        for (let r = 0; r < rows.length; r++) {
          if (result.table.rowError[r]) expect(result.rowFlags[r]).toMatch(/INPUT_ERROR/);
        }
      }),
      { numRuns: 300 },
    );
  });

  it('gives the same result twice', () => {
    fc.assert(
      fc.property(table, (rows) => {
        const a = recalculateTable(rawTable(CANONICAL_HEADERS, rows), { method, worklist });
        const b = recalculateTable(rawTable(CANONICAL_HEADERS, rows), { method, worklist });
        expect(b.rowFlags).toEqual(a.rowFlags);
        expect([...b.computed.entries()].map(([k, v]) => [k, [...v]])).toEqual([...a.computed.entries()].map(([k, v]) => [k, [...v]]));
      }),
      { numRuns: 100 },
    );
  });
});
