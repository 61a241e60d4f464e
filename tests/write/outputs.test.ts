import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { recalculate, writeOutputs, VERSION } from '../../src/index.js';

const dir = mkdtempSync(join(tmpdir(), 'phasebook-outputs-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('writeOutputs as a library call (issue 18, point 4)', () => {
  it('needs nothing but the output folder: the run facts default to now, a library call and this version', async () => {
    const result = await recalculate('samples/kestrel-brook-2026-11.csv', { method: 'templates/surface-water.yaml' });
    const written = await writeOutputs(result, { outDir: dir });
    expect(Object.keys(written).sort()).toEqual(['csv', 'html', 'xlsx']);
    expect(readdirSync(dir).sort()).toEqual([
      'kestrel-brook-2026-11.MB-2611-A.report.html',
      'kestrel-brook-2026-11.results.csv',
      'kestrel-brook-2026-11.xlsx',
    ]);
    const report = readFileSync(join(dir, 'kestrel-brook-2026-11.MB-2611-A.report.html'), 'utf8');
    expect(report).toContain(`<meta name="generator" content="phasebook ${VERSION}">`);
  });
});
