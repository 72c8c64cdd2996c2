/**
 * Set up before each integration and browser file: the server modules a test calls in its own process (charging a
 * card, running a sweep) log through the app's logger, whose info lines (one JSON object each) would land between
 * vitest's report lines. Warnings and errors still show; TEST_LOG_LEVEL=info shows everything again. The app, the
 * worker and the processes a test starts log as before, to their own files.
 */
import { log } from '../../src/lib/server/log';

log.level = process.env.TEST_LOG_LEVEL ?? 'warn';
