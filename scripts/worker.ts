/**
 * Runs the background worker until stopped (SIGINT/SIGTERM: the job in hand is finished, within
 * SHUTDOWN_TIMEOUT_MS, then the pool is closed). Bundled into dist/scripts/worker.mjs for production.
 */
export {};

process.env.BEAMWARDEN_PROCESS ??= 'worker';
const { startWorker } = await import('../src/lib/server/worker');
const { env } = await import('../src/lib/server/env');
const { log, runShutdownHooks } = await import('../src/lib/server/log');
try {
  env();
} catch (err) {
  log.fatal({ event: 'config' }, (err as Error).message);
  process.exit(1);
}

// A database restart makes pg-boss's own calls (fetch, complete) fail once with nobody awaiting them; the job they
// concerned expires and is retried by its queue. Log such a failure and keep running rather than exit: a worker
// that stopped would leave every later e-mail and payment retry waiting.
process.on('unhandledRejection', (err) => {
  log.warn({ event: 'error', message: err instanceof Error ? err.message : String(err) }, 'a background call failed and will be retried');
});

const boss = await startWorker();
log.info({ event: 'listening' }, 'worker running');
const stop = async () => {
  log.info({ event: 'shutdown' }, 'worker stopping: finishing the job in hand');
  await boss.stop({ graceful: true, timeout: env().SHUTDOWN_TIMEOUT_MS, wait: true });
  await runShutdownHooks();
  log.info({ event: 'shutdown' }, 'worker stopped');
  process.exit(0);
};
process.once('SIGINT', stop);
process.once('SIGTERM', stop);
