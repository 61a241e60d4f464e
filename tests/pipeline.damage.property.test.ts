/**
 * Property-based tests (fast-check) of issue 5 through the real readers: random
 * worklists with random damage are written to files and run through
 * `recalculate` (src/pipeline.ts). They never throw except a StopError for
 * whole-file damage, keep every row that holds a value (in order, cells as
 * written), and give the same result and the same results CSV twice.
 */
import { readFileSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import ExcelJS from 'exceljs';
import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { StopError } from '../src/errors.js';
import { loadMethod } from '../src/method/load.js';
import { recalculate, type RecalcResult } from '../src/pipeline.js';
import { writeResultsCsv } from '../src/write/csv.js';
import { outputColumns } from '../src/write/output-columns.js';
import { tempDir } from './helpers/cli.js';
import { CANONICAL_HEADERS } from './helpers/raw-table.js';

const method = loadMethod('templates/generic-lle.yaml');
const WIDTH = CANONICAL_HEADERS.length;
let dir: string;
let files = 0;

beforeAll(() => {
  dir = tempDir('phasebook-damage-');
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// ------------------------------------------------------------------ generators

/** Characters that stress CSV quoting, trimming, formula guards and UTF-8. */
const CHARS = [',', ';', '"', '\n', '\r', ' ', '\t', '=', '+', '-', '@', '.', 'e', 'a', 'Z', '1', '0', 'é', 'µ', '😀', '\u00a0', '\u200b', '\u2028'];
const text = fc.string({ unit: fc.constantFrom(...CHARS), maxLength: 10 });
const numberish = fc.oneof(
  fc.double({ noNaN: false }).map(String),
  fc.double({ min: -5, max: 500, noNaN: true }).map(String),
  fc.integer({ min: -3, max: 6 }).map(String),
  fc.constantFrom('Infinity', '-Infinity', 'NaN', '1e400', '-0', ' +2.5 ', '+100', '1,5', '0x10', 'ten', '', '  ', '12.5', '100', '10', '3'),
);
const word = fc.constantFrom('sample', 'blank', 'lcs', 'lcsd', 'ms', 'msd', 'dup', 'qc', 'spike?', 'acid', 'base', 'neutral', 'S1', 'S2', 'B1', 'neutral-y', '=SUM(A1)', '@cmd');
const cell = fc.oneof({ weight: 3, arbitrary: numberish }, { weight: 2, arbitrary: word }, { weight: 2, arbitrary: text });

type RowShape = 'whole' | 'short' | 'long' | 'blank';
interface GenRow {
  shape: RowShape;
  cells: string[];
}

const row: fc.Arbitrary<GenRow> = fc.oneof(
  { weight: 6, arbitrary: fc.array(cell, { minLength: WIDTH, maxLength: WIDTH }).map((cells) => ({ shape: 'whole' as const, cells })) },
  {
    weight: 1,
    arbitrary: fc
      .tuple(fc.array(cell, { minLength: WIDTH, maxLength: WIDTH }), fc.integer({ min: 1, max: WIDTH - 1 }))
      .map(([cells, n]) => ({ shape: 'short' as const, cells: cells.slice(0, n) })),
  },
  {
    weight: 1,
    arbitrary: fc
      .tuple(fc.array(cell, { minLength: WIDTH, maxLength: WIDTH }), fc.array(cell, { minLength: 1, maxLength: 4 }))
      .map(([cells, extra]) => ({ shape: 'long' as const, cells: [...cells, ...extra] })),
  },
  { weight: 1, arbitrary: fc.array(fc.constantFrom('', ' ', '\t'), { minLength: 1, maxLength: WIDTH }).map((cells) => ({ shape: 'blank' as const, cells })) },
);

type FileDamage = 'none' | 'nul' | 'invalid-utf8' | 'unclosed-quote' | 'no-required-column' | 'empty';
const fileDamage = fc.oneof(
  { weight: 8, arbitrary: fc.constant<FileDamage>('none') },
  { weight: 2, arbitrary: fc.constantFrom<FileDamage>('nul', 'invalid-utf8', 'unclosed-quote', 'no-required-column', 'empty') },
);

const worklist = fc.record({
  rows: fc.array(row, { maxLength: 20 }),
  /** Per record: LF, CRLF or a lone CR (a file edited on several systems). */
  eols: fc.array(fc.constantFrom('\n', '\r\n', '\r'), { minLength: 22, maxLength: 22 }),
  /** Quote cells that do not need it, too. */
  quoteAll: fc.boolean(),
  bom: fc.boolean(),
  blankLinesFirst: fc.integer({ min: 0, max: 2 }),
  damage: fileDamage,
  /** Where whole-file damage goes, as a fraction of the file. */
  at: fc.double({ min: 0, max: 1, noNaN: true }),
});

// --------------------------------------------------------------------- helpers

/** RFC 4180 §2: a field with a comma, quote or line break is quoted, quotes doubled. */
function field(s: string, quoteAll: boolean): string {
  return quoteAll || /[",\r\n]/.test(s) || s !== s.trim() ? `"${s.replace(/"/g, '""')}"` : s;
}

const isBlank = (cells: readonly string[]) => cells.every((c) => c.trim() === '');

/** A line break inside a cell is read as LF (see src/read/csv.ts). */
const asRead = (s: string) => s.replace(/\r\n?/g, '\n');

function writeWorklist(w: fc.GenValue<typeof worklist>): { path: string; kept: GenRow[]; stops: boolean } {
  const headers = w.damage === 'no-required-column' ? CANONICAL_HEADERS.map((h) => (h === 'solvent_volume' ? 'solvent_vol_x' : h)) : CANONICAL_HEADERS;
  const records = [...Array.from({ length: w.blankLinesFirst }, () => ''), headers.join(','), ...w.rows.map((r) => r.cells.map((c) => field(c, w.quoteAll)).join(','))];
  let content = records.map((r, i) => r + w.eols[i % w.eols.length]).join('');
  if (w.damage === 'unclosed-quote') content += '"never closed,1,2\n';
  let bytes = Buffer.from((w.bom ? '\ufeff' : '') + content, 'utf8');
  if (w.damage === 'nul' || w.damage === 'invalid-utf8') {
    const at = Math.floor(w.at * bytes.length);
    bytes = Buffer.concat([bytes.subarray(0, at), Buffer.from([w.damage === 'nul' ? 0x00 : 0xff]), bytes.subarray(at)]);
  }
  if (w.damage === 'empty') bytes = Buffer.alloc(0);
  const path = join(dir, `w${++files}.csv`);
  writeFileSync(path, bytes);
  const kept = w.rows.filter((r) => !isBlank(r.cells));
  return { path, kept, stops: w.damage !== 'none' || kept.length === 0 };
}

async function stopOrResult(path: string): Promise<RecalcResult | StopError> {
  try {
    return await recalculate(path, { method });
  } catch (err) {
    if (err instanceof StopError) return err;
    throw err; // anything else is a crash: the property fails
  }
}

async function resultsCsv(result: RecalcResult): Promise<string> {
  const path = join(dir, `r${++files}.csv`);
  const columns = outputColumns(result);
  await writeResultsCsv(path, {
    headers: columns.map((c) => c.header),
    columns: columns.map((c) => (c.kind === 'number' ? { kind: 'number', values: c.values } : { kind: 'text', values: c.values })),
    rowCount: result.rowsOut,
  });
  return readFileSync(path, 'utf8');
}

// ----------------------------------------------------------------------- tests

describe('random CSV worklists with random damage, through recalculate (fast-check)', () => {
  it('never throw but a StopError for whole-file damage; keep every row in order, cells as written; same output twice', async () => {
    await fc.assert(
      fc.asyncProperty(worklist, async (w) => {
        const { path, kept, stops } = writeWorklist(w);
        const a = await stopOrResult(path);
        if (a instanceof StopError) {
          expect(stops, `unexpected stop: ${a.describe()}`).toBe(true);
          expect(a.kind).toBe('input');
          expect(a.describe()).not.toMatch(/\.$/);
          return;
        }
        expect(stops, 'whole-file damage must stop the run').toBe(false);

        // Every row that holds a value is kept, in order, its cells as written.
        expect(a.rowsOut).toBe(kept.length);
        expect(a.raw.columns[0]).toEqual(kept.map((r) => asRead(r.cells[0]!)));
        for (let c = 1; c < WIDTH; c++) {
          expect(a.raw.columns[c]).toEqual(kept.map((r) => (c < r.cells.length ? asRead(r.cells[c]!) : null)));
        }
        for (const col of [a.rowFlags, a.qc.status, ...a.computed.values()]) expect(col).toHaveLength(kept.length);
        // Damaged rows say so; a row with an input error computes nothing.
        kept.forEach((r, i) => {
          const extraValues = r.cells.slice(WIDTH).some((x) => x.trim() !== '');
          if (r.shape === 'short' || (r.shape === 'long' && extraValues)) expect(a.rowFlags[i]).toMatch(/INPUT_ERROR/);
          if (a.table.rowError[i]) {
            expect(a.rowFlags[i]).toMatch(/INPUT_ERROR/);
            for (const col of a.computed.values()) expect(col[i]).toBeNaN();
          }
        });
        // Every input error names its 1-based spreadsheet row.
        for (const f of a.flags.filter((x) => x.code === 'INPUT_ERROR')) {
          expect(f.message.startsWith(`row ${a.raw.rowNumbers[f.row]}`), f.message).toBe(true);
          expect(f.message).not.toMatch(/^row \d+(?:, column "[^"]*")?: row \d+/);
        }

        // The same result and the same results CSV twice.
        const b = await stopOrResult(path);
        expect(b).not.toBeInstanceOf(StopError);
        const bb = b as RecalcResult;
        expect(bb.rowFlags).toEqual(a.rowFlags);
        expect(bb.flags).toEqual(a.flags);
        expect([...bb.computed].map(([k, v]) => [k, [...v]])).toEqual([...a.computed].map(([k, v]) => [k, [...v]]));
        expect(await resultsCsv(bb)).toBe(await resultsCsv(a));
      }),
      { numRuns: 150 },
    );
  }, 120_000);
});

// --------------------------------------------------------------------- XLSX

const xlsxCell = fc.oneof(
  fc.constant(null),
  fc.double({ noNaN: true, noDefaultInfinity: true }),
  fc.integer({ min: -3, max: 500 }),
  fc.boolean(),
  fc.date({ min: new Date(Date.UTC(1990, 0, 1)), max: new Date(Date.UTC(2040, 0, 1)), noInvalidDate: true }),
  word,
  text,
  fc.double({ min: 0, max: 100, noNaN: true }).map((result) => ({ formula: 'A1*1', result })),
);

describe('random XLSX worklists, through recalculate (fast-check)', () => {
  it('never throw, keep every row that holds a value, same result twice', async () => {
    await fc.assert(
      fc.asyncProperty(fc.array(fc.array(xlsxCell, { minLength: 1, maxLength: WIDTH + 2 }), { minLength: 1, maxLength: 12 }), async (rows) => {
        const wb = new ExcelJS.Workbook();
        const ws = wb.addWorksheet('Run');
        ws.addRow(CANONICAL_HEADERS);
        for (const r of rows) ws.addRow(r);
        const path = join(dir, `x${++files}.xlsx`);
        await wb.xlsx.writeFile(path);

        const holdsValue = (r: (typeof rows)[number]) =>
          r.some((v) => v !== null && !(typeof v === 'string' && v.trim() === ''));
        const kept = rows.filter(holdsValue);
        const a = await stopOrResult(path);
        if (kept.length === 0) {
          expect(a).toBeInstanceOf(StopError); // a header and no data rows
          return;
        }
        expect(a, a instanceof StopError ? a.describe() : '').not.toBeInstanceOf(StopError);
        const ra = a as RecalcResult;
        expect(ra.rowsOut).toBe(kept.length);
        for (const col of [ra.rowFlags, ...ra.computed.values()]) expect(col).toHaveLength(kept.length);
        const rb = (await stopOrResult(path)) as RecalcResult;
        expect(rb.rowFlags).toEqual(ra.rowFlags);
        expect([...rb.computed].map(([k, v]) => [k, [...v]])).toEqual([...ra.computed].map(([k, v]) => [k, [...v]]));
      }),
      { numRuns: 25 },
    );
  }, 120_000);
});
