/**
 * Three projects: unit (pure modules, fast, parallel), integration (the running app and the real
 * PostgreSQL started by scripts/test.ts) and e2e (headless Chromium through playwright-core).
 * Files run one at a time: integration and e2e files share one database and one app (unit files are
 * quick, so serialising them costs little). Each file makes its own data, so any order works
 * (`npm test -- --sequence.shuffle`).
 */
import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    fileParallelism: false,
    projects: [
      {
        test: { name: 'unit', include: ['tests/unit/**/*.test.ts'], environment: 'node' },
      },
      {
        test: {
          name: 'integration',
          include: ['tests/integration/**/*.test.ts'],
          environment: 'node',
          testTimeout: 90_000,
          hookTimeout: 60_000,
        },
      },
      {
        test: {
          name: 'e2e',
          include: ['tests/e2e/**/*.spec.ts'],
          environment: 'node',
          // one Chromium for the whole run; each file connects to it and closes its own contexts
          globalSetup: ['tests/support/browser-server.ts'],
          // a screen's answer can take a few seconds on a busy machine: poll for it longer than vitest's 1 s default
          expect: { poll: { timeout: 15_000 } },
          testTimeout: 90_000,
          hookTimeout: 60_000,
        },
      },
    ],
  },
});
