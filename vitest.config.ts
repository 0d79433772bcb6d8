import { defineConfig } from 'vitest/config';

// Unit and property tests of the science core, io, jobs, host and CLI.
// Browser (UI) tests live in test/ui and run through scripts/test-ui.mjs instead.
export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    exclude: ['test/ui/**', 'node_modules/**'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
    // one temporary folder per run, removed at the end (test/helpers/temp-folder.ts)
    globalSetup: ['test/helpers/temp-folder.ts'],
  },
});
