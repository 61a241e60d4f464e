import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import Papa from 'papaparse';
import { beforeAll, describe, expect, it } from 'vitest';
import { CLI, ROOT, tempDir } from '../helpers/cli.js';

/**
 * `npm run bench` at its smallest size, as CI runs it: a smoke test of
 * correctness, never of time. The bench's own check (phasebook's computed
 * columns against the floor's, as text) must pass, and this test repeats the
 * comparison itself on the files the bench kept, with a different parser setup.
 */
const SIZE = 10_000;
const COMPUTED = ['distribution_ratio', 'extraction_efficiency_pct', 'pre_extraction_conc [ng/mL]', 'spike_recovery_pct', 'rpd_pct'];

interface BenchReport {
  results: Array<{ size: number; variant: string; runs: number; wallS: number; peakMb: number }>;
  checks: Array<{ size: number; rows: number; identical: boolean; diffs: unknown[] }>;
}

const work = tempDir('phasebook-bench-smoke-');
let run: { code: number | null; stdout: string; stderr: string };
let report: BenchReport;

beforeAll(() => {
  if (!existsSync(CLI)) throw new Error('dist/cli.js is missing: run `npm run build` first (npm test does)');
  const json = join(work, 'report.json');
  const r = spawnSync(
    process.execPath,
    [join(ROOT, 'bench/run.mjs'), '--sizes', String(SIZE), '--runs', '1', '--warmup', '0', '--no-small', '--no-hostile', '--no-write', '--json', json, '--keep', work],
    { cwd: ROOT, encoding: 'utf8', timeout: 600_000 },
  );
  run = { code: r.status, stdout: r.stdout, stderr: r.stderr };
  report = existsSync(json) ? (JSON.parse(readFileSync(json, 'utf8')) as BenchReport) : { results: [], checks: [] };
}, 660_000);

function rows(path: string): string[][] {
  return Papa.parse<string[]>(readFileSync(path, 'utf8'), { skipEmptyLines: 'greedy' }).data;
}

describe(`npm run bench at ${SIZE} rows (smoke test: correctness, not time)`, () => {
  it('runs to the end and prints the table', () => {
    expect(run.stderr).not.toMatch(/Error/);
    expect(run.code).toBe(0);
    expect(run.stdout).toMatch(/\| rows \| variant \|/);
    expect(report.results.map((r) => r.variant)).toEqual(['floor csv', 'phasebook csv', 'floor xlsx', 'phasebook csv+xlsx', 'phasebook every output']);
    for (const r of report.results) {
      expect(r.size).toBe(SIZE);
      expect(r.runs).toBe(1);
      expect(r.wallS).toBeGreaterThan(0);
      expect(r.peakMb).toBeGreaterThan(10); // a Node process holds tens of MB at least
    }
  });

  it("finds phasebook's computed columns identical to the floor's arithmetic", () => {
    expect(report.checks).toHaveLength(1);
    expect(report.checks[0]).toMatchObject({ size: SIZE, rows: SIZE, identical: true, diffs: [] });
  });

  it('the kept files agree cell for cell (checked here independently)', () => {
    const ours = rows(join(work, `out-${SIZE}`, `worklist-${SIZE}.results.csv`));
    const floor = rows(join(work, `out-${SIZE}`, `worklist-${SIZE}.floor.csv`));
    expect(ours).toHaveLength(SIZE + 1);
    expect(floor).toHaveLength(SIZE + 1);
    const at = (header: string[], name: string) => header.indexOf(name);
    let numbers = 0;
    for (const name of COMPUTED) {
      const a = at(ours[0]!, name);
      const b = at(floor[0]!, name);
      expect(a).toBeGreaterThanOrEqual(0);
      expect(b).toBeGreaterThanOrEqual(0);
      for (let r = 1; r <= SIZE; r++) {
        if (ours[r]![a] !== floor[r]![b]) expect({ row: r + 1, name, phasebook: ours[r]![a] }).toEqual({ row: r + 1, name, phasebook: floor[r]![b] });
        if (ours[r]![a] !== '') numbers++;
      }
    }
    // Most cells hold numbers, so the comparison is not of empty cells.
    expect(numbers).toBeGreaterThan(SIZE * 3);
    // The input columns are carried through verbatim by both.
    expect(ours.map((r) => r.slice(0, 20))).toEqual(floor.map((r) => r.slice(0, 20)));
  });

  it('wrote the workbook of each side', () => {
    expect(existsSync(join(work, `out-${SIZE}`, `worklist-${SIZE}.xlsx`))).toBe(true);
    expect(existsSync(join(work, `out-${SIZE}`, `worklist-${SIZE}.floor.xlsx`))).toBe(true);
  });
});
