/** Runs the background worker until stopped (SIGINT/SIGTERM). */
import { startWorker } from '../src/lib/server/worker';

const boss = await startWorker();
console.log('worker: running');
const stop = async () => {
  await boss.stop({ graceful: true, timeout: 5000, wait: true });
  process.exit(0);
};
process.once('SIGINT', stop);
process.once('SIGTERM', stop);
