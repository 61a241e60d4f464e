import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { fallbackWords, fallbacksOf, FILL_ORDER } from '../../src/domain/fallbacks.js';
import { FIELD_SPECS } from '../../src/domain/fields.js';
import { recalculateData } from '../../src/index.js';
import { parseMethod } from '../../src/method/load.js';
import { verifyWorkbook } from '../../src/verify/verify.js';
import { writeWorkbook } from '../../src/write/workbook/index.js';

/**
 * What fills an empty numeric cell (DESIGN.md §4), described once and read by the engine and the
 * workbook alike (issue 17: the chain was written twice and had drifted: a method's declared default for
 * spike_conc or final_volume was shown on the Method sheet but not used by the engine).
 */
const generic = readFileSync('templates/generic-lle.yaml', 'utf8');
const withFields = (fields: string) => parseMethod(generic.replace('limits:\n', `fields:\n${fields}\nlimits:\n`), { file: 'inline.yaml' });
const HEADER = 'sample_id,sample_type,analyte,extract_conc,sample_volume,solvent_volume,extractions,final_volume,spike_conc,log_k,partition_coeff';

async function run(rows: string[], method = parseMethod(generic, { file: 'inline.yaml' })) {
  const result = await recalculateData([HEADER, ...rows].join('\n'), { method, name: 'fallbacks' });
  return { result, num: (field: string, r: number) => result.table.numbers.get(field)![r] };
}

describe('the fallback chains', () => {
  it('every numeric field has one, and a product comes after its factors', () => {
    for (const spec of FIELD_SPECS.values()) if (spec.kind === 'number') expect(fallbacksOf(spec.name).length).toBeGreaterThan(0);
    expect(FILL_ORDER.indexOf('final_volume')).toBeGreaterThan(FILL_ORDER.indexOf('extractions'));
    expect(FILL_ORDER.indexOf('final_volume')).toBeGreaterThan(FILL_ORDER.indexOf('solvent_volume'));
  });

  it.each([
    ['extractions', false, 'the default'],
    ['final_volume', false, 'extractions × solvent_volume'],
    ['final_volume', true, 'the default, else extractions × solvent_volume'],
    ['partition_coeff', false, "10^log_k of the row, else the analyte's partition_coeff (Analytes), else the default"],
    ['reporting_limit', false, "the analyte's reporting limit (Analytes), else the method's default reporting limit, else the default"],
    ['spike_conc', false, ''],
    ['spike_conc', true, 'the default'],
  ] as const)('%s (a method default: %s) reads "%s"', (field, hasDefault, words) => {
    expect(fallbackWords(field, { hasDefault })).toBe(words);
  });

  it('fills as DESIGN.md §4 says: n 1, final volume n × V_org, K = 10^log_k', async () => {
    const { num } = await run(['S1,sample,a,5,100,10,,,,2,', 'S2,sample,a,5,100,10,3,,,,']);
    expect(num('extractions', 0)).toBe(1);
    expect(num('final_volume', 0)).toBe(10);
    expect(num('partition_coeff', 0)).toBeCloseTo(100, 12);
    expect(num('final_volume', 1)).toBe(30);
  });

  it("uses a method's declared default for any numeric field, before phasebook's own", async () => {
    const method = withFields('  spike_conc: { default: 2 }\n  final_volume: { default: 1.5 }\n  extractions: { default: 2 }');
    const { result, num } = await run(['L1,lcs,a,5,100,10,,,,,', 'S1,sample,a,5,100,10,,4,,,'], method);
    expect(num('spike_conc', 0)).toBe(2);
    expect(result.rowFlags[0]).not.toContain('INPUT_ERROR');
    expect(num('extractions', 0)).toBe(2);
    expect(num('final_volume', 0)).toBe(1.5); // the declared default, not n × V_org
    expect(num('final_volume', 1)).toBe(4); // a cell always wins
  });
});

describe('the workbook follows the same chains', () => {
  it("writes a method's declared defaults into the as-used formulas, and verify finds the sheet and the engine agree", async () => {
    const dir = mkdtempSync(join(tmpdir(), 'phasebook-fallbacks-'));
    try {
      const method = withFields('  spike_conc: { default: 2 }\n  final_volume: { default: 1.5 }');
      const { result } = await run(['L1,lcs,a,5,100,10,,,,,', 'S1,sample,a,5,100,10,3,,,2,'], method);
      const path = join(dir, 'fallbacks.xlsx');
      await writeWorkbook(path, result, { run: { timestamp: '2026-12-01T00:00:00.000Z', command: 'test', version: '0', node: 'v20.test' } });
      const report = await verifyWorkbook(path);
      expect(report.differences).toEqual([]);
      expect(report.digestMatches).toBe(true);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });
});
