import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vitest/config';

const root = fileURLToPath(new URL('..', import.meta.url));
// generous: a test waits for conditions, and a loaded machine may be many times slower;
// these limits only catch a hang
const limits = { testTimeout: 600_000, hookTimeout: 900_000 };

export default defineConfig({
  test: {
    root,
    pool: 'forks',
    // two test files at once: most of a file's time is spent waiting on its child processes and servers
    maxWorkers: 2,
    reporters: ['default', './test/support/summary-reporter.ts'],
    // once for the whole run (the projects below do not repeat it)
    globalSetup: ['test/support/global-setup.ts'],
    projects: [
      {
        test: {
          name: 'unit',
          root,
          ...limits,
          include: ['test/unit/**/*.test.ts'],
          // The unit files run one after another in the same worker processes instead of each in a
          // new one: they start no servers or stores, they restore what they change (environment
          // variables, spies), and their modules keep only caches keyed by what they hold. All 873
          // tests pass with files and tests in any order (vitest --sequence.shuffle, eight seeds,
          // 2026-12-03), and the unit files take ~38 s of CPU instead of 61 s.
          isolate: false,
        },
      },
      {
        test: {
          name: 'services',
          root,
          ...limits,
          include: ['test/**/*.test.ts'],
          exclude: ['test/unit/**'],
        },
      },
    ],
  },
});
