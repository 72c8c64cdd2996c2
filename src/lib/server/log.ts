/**
 * The one logger (pino): JSON lines on stdout, one object per event, readable lines in a terminal
 * (LOG_FORMAT=auto). Secrets never go in: callers pass ids, codes and counts, and the redact list
 * below blanks the usual places a secret or card number could hide if an object is logged whole.
 */
import { AsyncLocalStorage } from 'node:async_hooks';
import pino, { type Logger } from 'pino';
import pretty from 'pino-pretty';

const level = process.env.LOG_LEVEL ?? 'info';
const format = process.env.LOG_FORMAT ?? 'auto';
const usePretty = format === 'pretty' || (format === 'auto' && process.stdout.isTTY === true);

const options: pino.LoggerOptions = {
  level,
  base: { service: process.env.BEAMWARDEN_PROCESS ?? 'app' },
  timestamp: pino.stdTimeFunctions.isoTime,
  redact: {
    paths: ['password', '*.password', 'secret', '*.secret', 'authorization', '*.authorization', 'cookie', '*.cookie', 'card', '*.card', 'source', '*.source', 'headers', '*.headers'],
    censor: '[hidden]',
  },
  serializers: { err: pino.stdSerializers.err },
};

export const log: Logger = usePretty
  ? pino(options, pretty({ colorize: true, sync: true, translateTime: 'SYS:HH:MM:ss', ignore: 'pid,hostname,service' }))
  : pino(options, pino.destination({ dest: 1, sync: true }));

/** What is known about the request being served (request id, route, person), shared by the server wrapper and the app. */
export interface RequestContext {
  requestId: string;
  route?: string;
  personId?: string;
  /** SQL statements the request ran (counted by db.ts), for the request's log line. */
  queries?: number;
}

const KEY = Symbol.for('beamwarden.requestContext');
/** One store per process, even when this module is bundled twice (the server wrapper and the app build). */
export const requestContext: AsyncLocalStorage<RequestContext> = ((globalThis as Record<symbol, unknown>)[KEY] ??= new AsyncLocalStorage<RequestContext>()) as AsyncLocalStorage<RequestContext>;

export function currentRequest(): RequestContext | undefined {
  return requestContext.getStore();
}

const SHUTDOWN = Symbol.for('beamwarden.shutdownHooks');

/** Registers something to close when the process stops gracefully (the pool, the queue handle). */
export function onShutdown(name: string, fn: () => Promise<void>): void {
  const hooks = ((globalThis as Record<symbol, unknown>)[SHUTDOWN] ??= new Map<string, () => Promise<void>>()) as Map<string, () => Promise<void>>;
  hooks.set(name, fn);
}

/** Runs every registered close hook (each at most once), logging failures rather than throwing. */
export async function runShutdownHooks(): Promise<void> {
  const hooks = ((globalThis as Record<symbol, unknown>)[SHUTDOWN] as Map<string, () => Promise<void>> | undefined) ?? new Map();
  for (const [name, fn] of [...hooks.entries()]) {
    hooks.delete(name);
    try {
      await fn();
      log.info({ event: 'shutdown', closed: name }, `closed ${name}`);
    } catch (err) {
      log.error({ event: 'shutdown', closed: name, err }, `closing ${name} failed`);
    }
  }
}
