/**
 * The local stand-in for the payment provider's API (stripe-stateful-mock), bound to loopback only.
 * Its state lives in memory: a restart forgets every customer and charge, as a real outage would not.
 */
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);
const { createExpressApp } = require('stripe-stateful-mock') as { createExpressApp: () => { listen: (port: number, host: string, cb: () => void) => unknown } };
const log = require('loglevel') as { setLevel: (l: string) => void };
log.setLevel('warn');

const port = Number(process.env.STRIPE_PORT ?? 12111);
const host = process.env.BIND_HOST ?? '127.0.0.1';
createExpressApp().listen(port, host, () => {
  console.log(`payment fake listening on http://${host}:${port}`);
});
