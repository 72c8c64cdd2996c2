/**
 * Three projects: unit (pure modules), integration (the running app and the real PostgreSQL started by
 * scripts/test.ts) and e2e (headless Chromium through playwright-core). All files share one database and one app.
 *
 * `npm test` runs vitest twice (scripts/test.ts sets TEST_FILE_SET): first the `parallel` set — the unit files and the
 * integration files in PARALLEL_INTEGRATION, which make all their own data and change nothing another file reads —
 * and the e2e files in PARALLEL_E2E — two files at a time; then the `serial` set — every other file — one at a time.
 * Without TEST_FILE_SET (vitest run directly) every file runs one at a time, as before. Any order works
 * (`npm test -- --sequence.shuffle.files`). Decision record 0415.
 */
import path from 'node:path';
import { configDefaults, defineConfig } from 'vitest/config';
import LongestFirst from './tests/support/sequencer';

/**
 * Integration files that may run beside each other: each makes its own people, machines, groups and bookings (or only
 * reads demo rows nobody in this list changes), changes no site-wide setting, price, material rule or sign-in
 * counter another file in the list relies on, stops no service, runs no sweep over every row, and counts no table as a
 * whole (a sweep a file runs itself is limited to its own machines). A file that does any of these stays out of
 * the list (decision record 0415 says why for each).
 */
export const PARALLEL_INTEGRATION = [
  'access-matrix',
  'accounts',
  'booking-calendar',
  'booking-materials-and-billing',
  'bookings',
  'configured-services',
  'controllers',
  'csv-exports',
  'faults',
  'induction-sessions',
  'machines-admin',
  'migrations',
  'reconcile-command',
  'return-to-service',
  'roles-and-api',
  'upkeep-reminders',
].map((name) => `tests/integration/${name}.test.ts`);

/**
 * Browser files that may run beside the parallel set: each works on a machine of its own (`createTestMachine`) or only
 * reads screens, and asserts nothing that a concurrent file's rows could change (the Floor's or a list's length, a
 * report's total read at two moments — reports-journey compares screen and CSV only while the total holds still — the
 * sign-in page, which accounts.test.ts turns institution-only for a moment), and none clears the request counters
 * (clearSignInLimits), which accounts.test.ts counts up to a 429. fault-journey reports and resolves its fault with
 * people of its own; sign-in-by-role signs people of its own in through the form, on a domain that accounts.test.ts's
 * institution-only moment does not cover, and forgets only their counters. The journeys that change rules, prices,
 * quizzes, the site, a demo laser, or book the demo people stay serial; account-journey charges a member of its own
 * (scheduling a price version is the serial pricing-journey); booking-materials blocks plywood on a test machine of its
 * own (an override of that machine only); materials-screens only reads the rules (changing one is materials-journey).
 * clearance-journey and induction-journey work on a machine group of their own (support/group.ts: a copy of a demo
 * group with its quiz and a test laser, removed in afterAll, as the clearance tests read the seeded groups only);
 * machines-screen adds, edits and retires a laser of its own; admin-people grants a role to and deactivates people
 * of its own (signed up from addresses of their own), reads the audit filtered to its own change and forgets only
 * its own person's sign-in counters. Serial, and why: admin-console (renames the site) and site-locale change
 * the site settings; admin-accounts the institution sign-in settings; institution-sign-in presses the sign-in page's
 * "Sign in with <site name>" button, which accounts.test.ts and admin-accounts rename for a moment;
 * pricing-journey schedules a price version; materials-journey changes a material rule of the whole site;
 * machines-admin counts the machines in service (calendars, labels).
 */
export const PARALLEL_E2E = [
  'account-journey',
  'admin-people',
  'book-feedback',
  'booking-journey',
  'booking-materials',
  'clearance-journey',
  'fault-journey',
  'induction-journey',
  'machine-journey',
  'machine-page',
  'machines-screen',
  'materials-screens',
  'phone-width-and-accessibility',
  'qr-offline',
  'reports-journey',
  'safety-gate',
  'sign-in-by-role',
].map((name) => `tests/e2e/${name}.spec.ts`);

const fileSet = process.env.TEST_FILE_SET as 'parallel' | 'serial' | undefined;
/** The files of a project in this pass: all of them (no set), only the parallel ones, or the rest. */
const inSet = (include: string[], parallel: string[] | 'all'): { include: string[]; exclude?: string[] } => {
  if (!fileSet) return { include };
  if (fileSet === 'parallel') return { include: parallel === 'all' ? include : parallel };
  return parallel === 'all' ? { include: [] } : { include, exclude: [...configDefaults.exclude, ...parallel] };
};

/** The `@lib/…` alias of tsconfig.json (Astro and esbuild read tsconfig paths themselves; vite's test runner does not). */
const resolve = { alias: { '@lib': path.resolve(import.meta.dirname, 'src/lib') } };

/** `--sequence.shuffle…` on the command line: vitest's random order; otherwise longest first (support/sequencer.ts). */
const shuffled = process.argv.some((a) => a.startsWith('--sequence.shuffle'));

export default defineConfig({
  test: {
    ...(shuffled ? {} : { sequence: { sequencer: LongestFirst } }),
    // two files at a time in the parallel pass (a 2-core machine also runs the app, the worker and PostgreSQL);
    // TEST_PARALLEL_FILES=1 runs that pass one at a time too (to compare), 3 or more on a bigger machine
    fileParallelism: fileSet === 'parallel',
    ...(fileSet === 'parallel' ? { maxWorkers: Math.max(1, Number(process.env.TEST_PARALLEL_FILES ?? 2) || 2), minWorkers: 1 } : {}),
    poolOptions: { threads: { isolate: false }, ...(fileSet === 'parallel' && process.env.TEST_ISOLATE !== '1' ? { forks: { isolate: false } } : {}) },
    projects: [
      {
        resolve,
        // pure modules, no mocks: the unit files share worker threads and their module graph (no process and no
        // new import of vitest per file) — the threads pool is the unit project's alone (root poolOptions below)
        test: { name: 'unit', ...inSet(['tests/unit/**/*.test.ts'], 'all'), environment: 'node', pool: 'threads' },
      },
      {
        resolve,
        test: {
          name: 'integration',
          ...inSet(['tests/integration/**/*.test.ts'], PARALLEL_INTEGRATION),
          environment: 'node',
          setupFiles: ['tests/support/quiet-log.ts'],
          // the serial pass runs its integration files one after another in one process (no new process and module
          // graph per file: ~1 s each); they share no module state but lazily reopened pools and caches
          // (decision record 0430). TEST_ISOLATE=1 gives each file its own process again.
          ...(fileSet === 'serial' && process.env.TEST_ISOLATE !== '1' ? { isolate: false, poolOptions: { forks: { isolate: false, singleFork: true } } } : {}),
          testTimeout: 90_000,
          hookTimeout: 60_000,
        },
      },
      {
        resolve,
        test: {
          name: 'e2e',
          ...inSet(['tests/e2e/**/*.spec.ts'], PARALLEL_E2E),
          environment: 'node',
          setupFiles: ['tests/support/quiet-log.ts'],
          // one Chromium for the whole run; each file connects to it and closes its own contexts
          globalSetup: ['tests/support/browser-server.ts'],
          // the serial pass runs its browser files in one process too, as the integration files (decision record 0430)
          ...(fileSet === 'serial' && process.env.TEST_ISOLATE !== '1' ? { isolate: false, poolOptions: { forks: { isolate: false, singleFork: true } } } : {}),
          // a screen's answer can take a few seconds on a busy machine: poll for it longer than vitest's 1 s default
          expect: { poll: { timeout: 15_000 } },
          testTimeout: 90_000,
          hookTimeout: 60_000,
        },
      },
    ],
  },
});
