/**
 * The workbook from the built CLI: written atomically, never replaced without
 * --force, its time set by --timestamp, and the same command gives the same parts.
 */
import { createHash } from 'node:crypto';
import { readFileSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ROOT, runCli, tempDir } from '../helpers/cli.js';
import { plain, readBook, rowWith, unzipParts, valueByKey } from '../verify/workbook-fixtures.js';

const WORKLIST = join(ROOT, 'samples/tarnmoor-tmr204-run07.csv');
const METHOD = join(ROOT, 'templates/plasma-amitriptyline.yaml');
const sha = (path: string) => createHash('sha256').update(readFileSync(path)).digest('hex');
const recalc = (out: string, ...more: string[]) =>
  runCli(['recalc', WORKLIST, '--method', METHOD, '--out', out, '--outputs', 'xlsx', '--timestamp', '2026-11-20T16:00:00Z', '--quiet', ...more]);

describe('recalc writes the workbook', () => {
  it('with the seven sheets, the time given by --timestamp and the command line', async () => {
    const out = tempDir('phasebook-e2e-wb-');
    const r = recalc(out);
    expect(r.code, r.stderr).toBe(0);
    const path = join(out, 'tarnmoor-tmr204-run07.xlsx');
    const wb = await readBook(path);
    expect(wb.worksheets.map((w) => w.name)).toEqual(['Summary', 'Results', 'QC', 'Flags', 'Trends', 'Method', 'Provenance']);
    const prov = wb.getWorksheet('Provenance')!;
    expect(valueByKey(prov, 'time (ISO 8601, UTC)')).toBe('2026-11-20T16:00:00.000Z');
    expect(valueByKey(prov, 'command line')).toBe(`phasebook recalc ${WORKLIST} --method ${METHOD} --out ${out} --outputs xlsx --timestamp 2026-11-20T16:00:00Z --quiet`);
    expect(valueByKey(prov, 'Node.js version')).toBe(process.version);
    expect(readdirSync(out).filter((f) => f.startsWith('.phasebook-'))).toEqual([]); // no temporary file left
  });

  it('does not replace an existing workbook without --force, and does with it', () => {
    const out = tempDir('phasebook-e2e-wb-');
    expect(recalc(out).code).toBe(0);
    const path = join(out, 'tarnmoor-tmr204-run07.xlsx');
    const before = sha(path);
    const again = recalc(out);
    expect(again.code).toBe(2);
    expect(again.stderr).toContain('already exists; use --force to replace it');
    expect(sha(path)).toBe(before);
    const forced = recalc(out, '--force');
    expect(forced.code, forced.stderr).toBe(0);
  });

  it('the same command twice gives identical parts', async () => {
    const out = tempDir('phasebook-e2e-wb-');
    expect(recalc(out).code).toBe(0);
    const path = join(out, 'tarnmoor-tmr204-run07.xlsx');
    const first = await unzipParts(path);
    expect(recalc(out, '--force').code).toBe(0);
    // --force is on the command line now: only the Provenance sheet may differ.
    const second = await unzipParts(path);
    const changed = [...first.keys()].filter((k) => !first.get(k)!.equals(second.get(k)!));
    expect(changed).toEqual(['xl/worksheets/sheet7.xml']);
  });

  it('with --history, a Trends sheet naming the history and this run\'s series, which verify accepts', async () => {
    const out = tempDir('phasebook-e2e-wb-');
    const history = join(out, 'qc-history.db');
    const r = recalc(out, '--history', history);
    expect(r.code, r.stderr).toBe(0);
    const path = join(out, 'tarnmoor-tmr204-run07.xlsx');
    const trends = (await readBook(path)).getWorksheet('Trends')!;
    expect(valueByKey(trends, 'QC history')).toBe('qc-history.db');
    // The plasma demo's qc rows: one series per level, in concentration order (issue 14).
    const header = rowWith(trends, 'Series: one per analyte, control type and QC level') + 1;
    const series = [1, 2, 3, 4].map((i) => [1, 2, 3, 4].map((c) => plain(trends.getCell(header + i, c))));
    expect(series).toEqual([
      ['Amitriptyline', 'qc', 'lloq', 3],
      ['Amitriptyline', 'qc', 'low', 3],
      ['Amitriptyline', 'qc', 'mid', 3],
      ['Amitriptyline', 'qc', 'high', 3],
    ]);
    const v = runCli(['verify', path]);
    expect(v.code, v.stdout + v.stderr).toBe(0);
  });
});
