/**
 * More processes of the built app for the tests that need their own (a second app on the same database, an app to
 * kill, a site pointed at other services): started from dist-test with the test environment plus what the test
 * changes, on a free port, and waited for. scripts/lib/stack.ts stopServices() stops them.
 */
import net from 'node:net';
import path from 'node:path';
import { ROOT, portOpen, spawnService, type Service } from '../../scripts/lib/stack';

/** A loopback port nobody listens on right now. */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = net.createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const { port } = srv.address() as net.AddressInfo;
      srv.close(() => resolve(port));
    });
  });
}

export interface AppProcess {
  service: Service;
  port: number;
  url: string;
}

/**
 * Starts another app process (the production server, dist-test/scripts/serve.mjs: graceful stop, request log) and
 * waits until it listens. Its log is <dataDir>/logs/<name>.log. Fails at once if it exits, or if one of `alsoWatch`
 * (services it needs) does.
 */
export async function startApp(
  name: string,
  options: { port?: number; env?: Record<string, string>; dataDir?: string; timeoutMs?: number; alsoWatch?: Service[] } = {},
): Promise<AppProcess> {
  const port = options.port ?? (await freePort());
  const dataDir = options.dataDir ?? process.env.TEST_DATA_DIR!;
  const service = spawnService({ dataDir }, name, [path.join(ROOT, 'dist-test/scripts/serve.mjs')], { NODE_ENV: 'production', PORT: String(port), ...options.env });
  const until = Date.now() + (options.timeoutMs ?? 30_000);
  while (!(await portOpen(port))) {
    for (const s of [service, ...(options.alsoWatch ?? [])]) {
      if (s.child.exitCode !== null) throw new Error(`${s.name} exited (${s.child.exitCode}); see ${path.join(dataDir, 'logs', `${s.name}.log`)}`);
    }
    if (Date.now() > until) throw new Error(`the app process ${name} did not listen on ${port} in time`);
    await new Promise((r) => setTimeout(r, 150));
  }
  return { service, port, url: `http://127.0.0.1:${port}` };
}
