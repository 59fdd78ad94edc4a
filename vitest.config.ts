import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts', 'src/**/*.test.ts'],
    exclude: ['tests/e2e/**', 'node_modules/**'],
    // opencv.js is a thenable module object; interop would await it forever.
    deps: { interopDefault: false },
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
  },
});
