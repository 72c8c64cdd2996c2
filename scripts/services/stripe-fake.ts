/**
 * The local stand-in for the payment provider's API (stripe-stateful-mock), bound to loopback only.
 *
 * stripe-stateful-mock keeps its objects in memory. With STRIPE_STATE_FILE set, this wrapper keeps them across
 * restarts: every store the mock makes (customers, cards, charges, refunds, idempotency records, …) is registered
 * as it is created, written to the file (one v8 snapshot, so objects shared between stores stay shared) after each
 * request that changes something, and read back before the server listens. A restarted fake therefore still
 * knows every customer, card and charge, as a real provider would. The mock's private per-card extras (which test
 * token a saved card came from, which a charge on it reads) are captured through its cards module and kept too.
 * Not kept: the per-token state of the mock's "source token chains" (not used by Beamwarden).
 */
import fs from 'node:fs';
import http from 'node:http';
import path from 'node:path';
import v8 from 'node:v8';
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);

type Store = { data: Record<string, Record<string, unknown>> };
const stores: Store[] = [];
// register every store as the mock's modules create them (same order on every start: module load order)
const accountData = require('stripe-stateful-mock/dist/api/AccountData') as { AccountData: new () => Store };
const Original = accountData.AccountData;
accountData.AccountData = class Registered extends Original {
  constructor() {
    super();
    stores.push(this);
  }
};

// the mock keeps which test token each saved card came from in a private map (cards.getCardExtra), which a charge
// on that card needs: kept here too, so it is saved and restored with the stores
type CardsModule = { createFromSource: (token: string) => { id: string }; getCardExtra: (id: string) => unknown };
const cards = (require('stripe-stateful-mock/dist/api/cards') as { cards: CardsModule }).cards;
let cardExtras: Record<string, unknown> = {};
const originalCreate = cards.createFromSource;
const originalExtra = cards.getCardExtra;
cards.createFromSource = (token) => {
  const card = originalCreate(token);
  const extra = originalExtra(card.id);
  if (extra) cardExtras[card.id] = extra;
  return card;
};
cards.getCardExtra = (id) => originalExtra(id) ?? cardExtras[id];

const { createExpressApp } = require('stripe-stateful-mock') as { createExpressApp: () => http.RequestListener };
const log = require('loglevel') as { setLevel: (l: string) => void };
log.setLevel('warn');

const port = Number(process.env.STRIPE_PORT ?? 12111);
const host = process.env.BIND_HOST ?? '127.0.0.1';
const stateFile = process.env.STRIPE_STATE_FILE;

const app = createExpressApp();
let save = () => {};

if (stateFile) {
  if (fs.existsSync(stateFile)) {
    try {
      const saved = v8.deserialize(fs.readFileSync(stateFile)) as { stores: Store['data'][]; cardExtras?: Record<string, unknown> };
      if (saved.stores.length === stores.length) {
        saved.stores.forEach((data, i) => (stores[i]!.data = data));
        cardExtras = saved.cardExtras ?? {};
        console.log(`payment fake: restored its state from ${path.basename(stateFile)}`);
      } else {
        console.warn(`payment fake: ${path.basename(stateFile)} has ${saved.stores.length} stores, this version makes ${stores.length}; starting empty`);
      }
    } catch (err) {
      console.warn(`payment fake: could not read ${path.basename(stateFile)} (${(err as Error).message}); starting empty`);
    }
  }
  fs.mkdirSync(path.dirname(stateFile), { recursive: true });
  save = () => {
    const tmp = `${stateFile}.tmp`;
    fs.writeFileSync(tmp, v8.serialize({ stores: stores.map((s) => s.data), cardExtras }));
    fs.renameSync(tmp, stateFile);
  };
  for (const signal of ['SIGTERM', 'SIGINT'] as const) {
    process.once(signal, () => {
      save();
      process.exit(0);
    });
  }
}

// after any request that may change something has been answered, the state is written (when a file is set)
const server = http.createServer((req, res) => {
  if (req.method !== 'GET') res.on('finish', () => save());
  app(req, res);
});
server.listen(port, host, () => {
  console.log(`payment fake listening on http://${host}:${port}${stateFile ? ' (state kept across restarts)' : ''}`);
});
