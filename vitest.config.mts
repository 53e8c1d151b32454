// Test runner configuration: every layer but the real-editor test runs under `npm test`.
import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    exclude: ['test/editor/**', 'node_modules/**'],
    testTimeout: 30000,
    // `toEqual` takes a token that is its own span (the parser's) as equal to a plain span of the same offsets.
    setupFiles: ['test/span-equality.ts'],
    pool: 'threads',
    // Test files share a worker's module cache instead of re-importing the engine for each file
    // (import time dominated the run). A test must therefore not depend on fresh module state.
    isolate: false,
  },
});
