import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    testTimeout: 300_000,
    hookTimeout: 600_000,
    // Two cores here: keep worker count modest so CLI-spawning tests do not starve each other.
    maxWorkers: 2,
  },
});
