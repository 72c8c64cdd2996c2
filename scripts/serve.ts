/**
 * The app server for production and for `npm start` / `npm test`: the Astro build's handler inside a plain
 * Node HTTP server that adds what a lab's own server needs —
 *   - the environment is validated before anything listens (a bad variable is named, the process exits 1);
 *   - one JSON log line per request (method, route, status, duration, person, request id);
 *   - X-Forwarded-* honoured only from the addresses in TRUST_PROXY (the sign-in throttle counts by client);
 *   - gzip or brotli for HTML, JSON, JS and CSS; hashed assets under /_astro/ cached for a year (immutable);
 *   - the build's static files (client/) served from a list made at start: any other request goes to Astro without
 *     looking on disk first (the adapter's own server did two file-system look-ups per API request);
 *   - on SIGTERM/SIGINT: stop accepting, let requests in flight finish (SHUTDOWN_TIMEOUT_MS), close the pool.
 * Bundled by scripts/bundle.mjs into <outDir>/scripts/serve.mjs; run `node dist/scripts/serve.mjs`.
 */
import fs from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import { randomUUID } from 'node:crypto';
import { pathToFileURL } from 'node:url';
import compression from 'compression';
import send from 'send';
import { env, type Env } from '../src/lib/server/env';
import { log, requestContext, runShutdownHooks, type RequestContext } from '../src/lib/server/log';

process.env.ASTRO_NODE_AUTOSTART = 'disabled';
process.env.ASTRO_NODE_LOGGING = 'disabled';

let config: Env;
try {
  config = env();
} catch (err) {
  log.fatal({ event: 'config' }, (err as Error).message);
  process.exit(1);
}

const outDir = process.env.BEAMWARDEN_DIST ?? path.resolve(import.meta.dirname, '..');
const entry = (await import(pathToFileURL(path.join(outDir, 'server', 'entry.mjs')).href)) as {
  handler: (req: http.IncomingMessage, res: http.ServerResponse) => unknown;
};

/** The build's static files (Astro's client/ folder: hashed assets under /_astro/ and public/), by URL path. */
const clientDir = path.join(outDir, 'client');
const staticPaths = new Set(
  (fs.existsSync(clientDir) ? (fs.readdirSync(clientDir, { recursive: true }) as string[]) : [])
    .filter((f) => fs.statSync(path.join(clientDir, f)).isFile())
    .map((f) => `/${f.split(path.sep).join('/')}`),
);

/**
 * Serves `req` from the static files when its path names one (GET and HEAD), as the adapter's standalone server did:
 * `send` answers with the type, ETag, Last-Modified and ranges; hashed assets are cached for a year. Returns false
 * for everything else, which Astro answers.
 */
function servedStatic(req: http.IncomingMessage, res: http.ServerResponse, pathname: string): boolean {
  if ((req.method !== 'GET' && req.method !== 'HEAD') || !staticPaths.has(pathname)) return false;
  send(req, pathname, { root: clientDir, dotfiles: 'deny' })
    .on('headers', (r: http.ServerResponse) => {
      if (pathname.startsWith('/_astro/')) r.setHeader('Cache-Control', 'public, max-age=31536000, immutable');
    })
    .on('error', (err: { status?: number }) => {
      res.statusCode = err.status ?? 500;
      res.end();
    })
    .pipe(res);
  return true;
}

const trusted = new Set(config.TRUST_PROXY.split(',').map((a) => a.trim()).filter(Boolean));
const plain = (address: string | undefined) => (address ?? '').replace(/^::ffff:/, '');

/**
 * Forwarded headers count only when the peer is a trusted proxy; the client is then the nearest address in
 * X-Forwarded-For that is not itself a trusted proxy. From anyone else they are removed.
 */
function settleForwarded(req: http.IncomingMessage): boolean {
  const peer = plain(req.socket.remoteAddress);
  if (!trusted.has(peer)) {
    for (const h of ['x-forwarded-for', 'x-forwarded-proto', 'x-forwarded-host', 'x-forwarded-port', 'forwarded']) delete req.headers[h];
    return false;
  }
  const chain = String(req.headers['x-forwarded-for'] ?? '').split(',').map((a) => plain(a.trim())).filter(Boolean);
  let client = peer;
  while (chain.length > 0) {
    client = chain.pop()!;
    if (!trusted.has(client)) break;
  }
  req.headers['x-forwarded-for'] = client;
  return true;
}

const compress = compression({ threshold: 1024 });
let stopping = false;
let inFlight = 0;
/** Responses not yet finished: told to close their connection when a shutdown starts (see stop). */
const open = new Set<http.ServerResponse>();

const server = http.createServer((req, res) => {
  const started = process.hrtime.bigint();
  const fromProxy = settleForwarded(req);
  const incoming = req.headers['x-request-id'];
  const requestId = fromProxy && typeof incoming === 'string' && /^[\w.:-]{8,128}$/.test(incoming) ? incoming : randomUUID();
  req.headers['x-request-id'] = requestId;
  res.setHeader('x-request-id', requestId);
  if (stopping) res.setHeader('connection', 'close');
  const context: RequestContext = { requestId };
  inFlight++;
  open.add(res);
  let logged = false;
  const done = () => {
    if (logged) return;
    logged = true;
    inFlight--;
    open.delete(res);
    const pathname = (req.url ?? '/').split('?')[0]!;
    const status = res.writableFinished || res.headersSent ? res.statusCode : 499;
    const line = {
      event: 'request',
      requestId,
      method: req.method,
      route: context.route ?? (pathname.startsWith('/_astro/') ? '/_astro/[asset]' : pathname),
      status,
      durationMs: Math.round(Number(process.hrtime.bigint() - started) / 1e4) / 100,
      ...(context.personId ? { personId: context.personId } : {}),
      ...(context.queries ? { queries: context.queries } : {}),
    };
    if (status >= 500) log.error(line, 'request');
    else log.info(line, 'request');
    if (stopping) setImmediate(() => server.closeIdleConnections());
  };
  res.once('finish', done);
  res.once('close', done);
  const rawPath = (req.url ?? '/').split(/[?#]/)[0]!;
  try {
    decodeURI(req.url ?? '/');
  } catch {
    res.writeHead(400, { 'content-type': 'text/plain; charset=utf-8' });
    res.end('Bad request.');
    return;
  }
  requestContext.run(context, () => {
    compress(req as never, res as never, () => {
      if (servedStatic(req, res, rawPath)) return;
      Promise.resolve(entry.handler(req, res)).catch((err: unknown) => {
        log.error({ event: 'error', requestId, err }, 'unhandled request error');
        if (!res.headersSent) {
          res.statusCode = 500;
          res.setHeader('content-type', 'text/plain; charset=utf-8');
          res.end(`Something went wrong on our side. Reference ${requestId}.`);
        } else res.destroy();
      });
    });
  });
});
server.keepAliveTimeout = 65_000; // longer than common reverse proxies' idle time

const host = process.env.HOST ?? '127.0.0.1';
const port = Number(process.env.PORT ?? 4321);
server.listen(port, host, () => {
  log.info({ event: 'listening', host, port, trustProxy: [...trusted] }, `Beamwarden is listening on http://${host}:${port}`);
});

async function stop(signal: string): Promise<void> {
  if (stopping) return;
  stopping = true;
  log.info({ event: 'shutdown', signal, inFlight, timeoutMs: config.SHUTDOWN_TIMEOUT_MS }, 'stopping: no new connections, finishing requests in flight');
  const closed = new Promise<void>((resolve) => server.close(() => resolve()));
  // requests in flight answer with `Connection: close`, so their connections end with their answer
  for (const res of open) if (!res.headersSent) res.setHeader('connection', 'close');
  server.closeIdleConnections();
  // a keep-alive connection turns idle only once Node is done with its request (an answer sent before the whole
  // body arrived waits for the rest): close each as it does, not at the shutdown limit
  const sweep = setInterval(() => server.closeIdleConnections(), 200);
  let timedOut = false;
  const timer = setTimeout(() => {
    timedOut = true;
    log.warn({ event: 'shutdown', inFlight }, 'requests still in flight at the shutdown limit; closing their connections');
    server.closeAllConnections();
  }, config.SHUTDOWN_TIMEOUT_MS);
  await closed;
  clearTimeout(timer);
  clearInterval(sweep);
  await runShutdownHooks();
  log.info({ event: 'shutdown', timedOut }, 'stopped');
  process.exit(0);
}
process.once('SIGTERM', () => void stop('SIGTERM'));
process.once('SIGINT', () => void stop('SIGINT'));
