import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    root: fileURLToPath(new URL('..', import.meta.url)),
    include: ['test/**/*.test.ts'],
    // generous: a test waits for conditions, and a loaded machine may be many times slower;
    // these limits only catch a hang
    testTimeout: 600_000,
    hookTimeout: 900_000,
    pool: 'forks',
    // two test files at once: most of a file's time is spent waiting on its child processes and servers
    maxWorkers: 2,
    reporters: ['default', './test/support/summary-reporter.ts'],
    globalSetup: ['test/support/global-setup.ts'],
  },
});
