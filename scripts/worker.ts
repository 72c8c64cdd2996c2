/** Runs the background worker until stopped (SIGINT/SIGTERM). */
import { startWorker } from '../src/lib/server/worker';

// A database restart makes pg-boss's own calls (fetch, complete) fail once with nobody awaiting them; the job they
// concerned expires and is retried by its queue. Log such a failure and keep running rather than exit: a worker
// that stopped would leave every later e-mail and payment retry waiting.
process.on('unhandledRejection', (err) => {
  console.error('worker: a background call failed and will be retried:', err instanceof Error ? err.message : err);
});

const boss = await startWorker();
console.log('worker: running');
const stop = async () => {
  await boss.stop({ graceful: true, timeout: 5000, wait: true });
  process.exit(0);
};
process.once('SIGINT', stop);
process.once('SIGTERM', stop);
