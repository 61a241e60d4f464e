import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
// @ts-expect-error: the bench generator is plain JavaScript (bench/generate.mjs)
import { HEADERS, ROWS_PER_BATCH, worklistLines, writeWorklist } from '../../bench/generate.mjs';
import { loadMethod } from '../../src/method/load.js';
import { recalculate, type RecalcResult } from '../../src/pipeline.js';
import { ROOT, tempDir } from '../helpers/cli.js';

/**
 * Streaming must not change a number: a large generated worklist, read and
 * computed in one go (sized arrays, shared strings, progress reports), gives
 * exactly the results of the same rows cut into pieces of a few batches each
 * and computed piece by piece. Compared bit for bit (Object.is, so NaN = NaN
 * and 0 ≠ −0), with the flags and QC status of every row and the verdict of
 * every batch and analyte.
 */
const BATCHES = 120;
const BATCHES_PER_PIECE = 7; // pieces that do not divide the worklist evenly

const method = loadMethod(join(ROOT, 'templates/generic-lle.yaml'));
const dir = tempDir('phasebook-pieces-');
let whole: RecalcResult;
const pieces: RecalcResult[] = [];

beforeAll(async () => {
  const rows = BATCHES * ROWS_PER_BATCH;
  const wholePath = join(dir, 'whole.csv');
  await writeWorklist(wholePath, rows);
  whole = await recalculate(wholePath, { method, onProgress: () => {} });

  const lines: string[] = [...worklistLines(rows)];
  const header = lines[0]!;
  const perPiece = BATCHES_PER_PIECE * ROWS_PER_BATCH;
  for (let start = 1, k = 0; start < lines.length; start += perPiece, k++) {
    const path = join(dir, `piece-${k}.csv`);
    writeFileSync(path, [header, ...lines.slice(start, start + perPiece)].join('\n') + '\n');
    pieces.push(await recalculate(path, { method }));
  }
}, 300_000);

describe('a generated worklist computed whole and in pieces (issue 6: streaming must not change a number)', () => {
  it('reads every row of the generated worklist', () => {
    expect(whole.rowsIn).toBe(BATCHES * ROWS_PER_BATCH);
    expect(whole.raw.headers).toEqual(HEADERS);
    expect(pieces.reduce((n, p) => n + p.rowsIn, 0)).toBe(whole.rowsIn);
    expect(pieces.length).toBe(Math.ceil(BATCHES / BATCHES_PER_PIECE));
  });

  it.each(method.formulas.map((f) => f.name))('computed column %s is identical, bit for bit', (name) => {
    const joined = pieces.flatMap((p) => [...p.computed.get(name)!]);
    const all = [...whole.computed.get(name)!];
    expect(joined.length).toBe(all.length);
    const differing = all.map((x, r) => (Object.is(x, joined[r]) ? -1 : r)).filter((r) => r >= 0);
    expect(differing).toEqual([]);
    // The scenario exercises the column: most rows of each hold a number.
    expect(all.filter((x) => Number.isFinite(x)).length).toBeGreaterThan(name.includes('recovery') || name.includes('rpd') ? all.length / 10 : all.length / 2);
  });

  it('the input cells are kept verbatim, row for row', () => {
    for (let c = 0; c < whole.raw.headers.length; c++) {
      const joined = pieces.flatMap((p) => p.raw.columns[c]!);
      expect(joined).toEqual(whole.raw.columns[c]);
    }
  });

  it('every row has the same flags and QC status', () => {
    expect(pieces.flatMap((p) => p.rowFlags)).toEqual(whole.rowFlags);
    expect(pieces.flatMap((p) => p.qc.status)).toEqual(whole.qc.status);
    // The scenario has controls that fail and samples they qualify, so the comparison can fail.
    expect(whole.rowFlags.filter((f) => f !== '').length).toBeGreaterThan(0);
  });

  it('every batch and analyte has the same verdict and reasons', () => {
    const key = (g: RecalcResult['groups'][number]) => `${g.batch}|${g.analyte}|${g.verdict}|${g.reasons.join('; ')}`;
    expect(pieces.flatMap((p) => p.groups.map(key)).sort()).toEqual(whole.groups.map(key).sort());
  });
});
