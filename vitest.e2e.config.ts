import { defineConfig } from 'vitest/config';

// Browser tests: Debian's Chromium driven by playwright-core against the built app in dist/.
export default defineConfig({
  test: {
    include: ['tests/e2e/**/*.e2e.ts'],
    testTimeout: 180_000,
    hookTimeout: 180_000,
    fileParallelism: false,
    pool: 'forks',
  },
});
