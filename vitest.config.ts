/**
 * Three projects: unit (pure modules, fast, parallel), integration (the running app and the real
 * PostgreSQL started by scripts/test.ts) and e2e (headless Chromium through playwright-core).
 * Files run one at a time: integration and e2e files share one database and one app (unit files are
 * quick, so serialising them costs little). Each file makes its own data, so any order works
 * (`npm test -- --sequence.shuffle`).
 */
import path from 'node:path';
import { defineConfig } from 'vitest/config';

/** The `@lib/…` alias of tsconfig.json (Astro and esbuild read tsconfig paths themselves; vite's test runner does not). */
const resolve = { alias: { '@lib': path.resolve(import.meta.dirname, 'src/lib') } };

export default defineConfig({
  test: {
    fileParallelism: false,
    projects: [
      {
        resolve,
        test: { name: 'unit', include: ['tests/unit/**/*.test.ts'], environment: 'node' },
      },
      {
        resolve,
        test: {
          name: 'integration',
          include: ['tests/integration/**/*.test.ts'],
          environment: 'node',
          testTimeout: 90_000,
          hookTimeout: 60_000,
        },
      },
      {
        resolve,
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
