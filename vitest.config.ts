import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { defineConfig } from 'vitest/config';

/**
 * Two projects, one `npm test`:
 * - unit: the sources only (no build, no other program), in seconds: `npm run test:unit`;
 * - e2e: the built CLI and package, LibreOffice, Chromium, openpyxl, the bench: `npm run test:e2e`.
 * A missing LibreOffice or Chromium skips its tests on a workstation and fails them when CI is set
 * (tests/helpers/tools.ts).
 */
export default defineConfig({
  test: {
    testTimeout: 300_000,
    hookTimeout: 600_000,
    // Two cores here: keep worker count modest so CLI-spawning tests do not starve each other.
    maxWorkers: 2,
    // The CLI's code cache (scripts/bundle-loader.mjs) goes to a folder of the test run's own, not the user's.
    env: { PHASEBOOK_CACHE_DIR: join(tmpdir(), `phasebook-test-cache-${process.pid}`) },
    projects: [
      { extends: true, test: { name: 'unit', include: ['tests/**/*.test.ts'], exclude: ['tests/e2e/**'] } },
      { extends: true, test: { name: 'e2e', include: ['tests/e2e/**/*.test.ts'] } },
    ],
  },
});
