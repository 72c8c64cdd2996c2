/** The machine's enable state as its controller sees it: computed from the facts, and a long-poll woken by database notifications. */
import { EventEmitter } from 'node:events';
import pg from 'pg';
import { db } from '@lib/server/db';
import { env } from '@lib/server/env';
import { log } from '@lib/server/log';
import { canOperate } from '@lib/server/clearances/state';
import { decideState, stateDeadline, type ControllerState, type StateFacts } from '@lib/controller-rules';
import type { Controller } from './registry';

// ---------------------------------------------------------------------------------------------
// State and long-poll

interface StateSnapshot {
  state: ControllerState;
  sessionId: string | null;
  deadline: Date | null;
}

export async function snapshot(ctrl: Controller, now: Date): Promise<StateSnapshot> {
  const [machine, open] = await Promise.all([
    db()('machines').where({ id: ctrl.machineId }).first('status', 'retired_at'),
    db()('machine_sessions as s').join('people as p', 'p.id', 's.person_id').leftJoin('bookings as b', 'b.id', 's.booking_id')
      .where('s.machine_id', ctrl.machineId).whereNull('s.checked_out_at')
      .first('s.id', 's.person_id', 's.checked_in_at', 'p.active', 'b.ends_at'),
  ]);
  let session: StateFacts['session'] = null;
  if (open) {
    const verdict = await canOperate(open.person_id, ctrl.machineId, now);
    session = {
      endsAt: open.ends_at ?? new Date(open.checked_in_at.getTime() + 4 * 3600_000),
      personActive: open.active,
      clearance: verdict.ok ? { ok: true } : { ok: false, state: verdict.state },
    };
  }
  const facts: StateFacts = { machineOutOfService: !machine || !!machine.retired_at || machine.status === 'out of service', session };
  return { state: decideState(facts, now), sessionId: open?.id ?? null, deadline: stateDeadline(facts) };
}

const keyOf = (s: StateSnapshot) => (s.state.state === 'enabled' ? `enabled:${s.sessionId}:${s.state.until.toISOString()}` : `cut:${s.state.reason}`);

export type StateAnswer = { state: 'enabled'; until: string; sessionId: string } | { state: 'cut'; reason: string; message: string };

export function answerOf(s: StateSnapshot): StateAnswer {
  return s.state.state === 'enabled'
    ? { state: 'enabled', until: s.state.until.toISOString(), sessionId: s.sessionId! }
    : { state: 'cut', reason: s.state.reason, message: s.state.message };
}

/** One LISTEN connection per process; waiters subscribe by machine id ('*' wakes every waiter). */
const changes = new EventEmitter();
changes.setMaxListeners(0);
let listener: Promise<pg.Client> | null = null;

function listen(): Promise<pg.Client> {
  listener ??= (async () => {
    const client = new pg.Client({ connectionString: env().DATABASE_URL });
    const reset = () => {
      listener = null;
      changes.emit('*'); // waiters recompute rather than trust a dead connection
    };
    client.on('error', reset);
    client.on('end', reset);
    client.on('notification', (n) => {
      if (n.channel !== 'controller_state') return;
      if (n.payload === '*' || !n.payload) changes.emit('*');
      else changes.emit(n.payload);
    });
    try {
      await client.connect();
      await client.query('LISTEN controller_state');
    } catch (err) {
      listener = null;
      throw err;
    }
    return client;
  })();
  return listener;
}

/** A promise that settles when something about `machineId` may have changed, or after `ms`. */
function nextChange(machineId: string, ms: number): { promise: Promise<void>; cancel: () => void } {
  let done!: () => void;
  const promise = new Promise<void>((resolve) => (done = resolve));
  const timer = setTimeout(() => done(), Math.max(0, ms));
  const wake = () => done();
  changes.on(machineId, wake);
  changes.on('*', wake);
  const cancel = () => {
    clearTimeout(timer);
    changes.off(machineId, wake);
    changes.off('*', wake);
    done();
  };
  void promise.then(cancel);
  return { promise, cancel };
}

/**
 * The controller's state: at once when `waitSeconds` is 0 or the state differs from the last one this controller
 * was given; else held until the state changes (NOTIFY from any app process, or the session's end plus grace
 * passing) or `waitSeconds` run out.
 */
export async function controllerState(ctrl: Controller, waitSeconds = 0, signal?: AbortSignal): Promise<StateAnswer> {
  if (waitSeconds > 0) await listen().catch((err) => log.error({ event: 'error', err }, 'controllers: LISTEN failed; long-polls fall back to timers'));
  const giveUpAt = Date.now() + waitSeconds * 1000;
  let watch = nextChange(ctrl.machineId, giveUpAt - Date.now());
  let s = await snapshot(ctrl, new Date());
  try {
    while (waitSeconds > 0 && keyOf(s) === ctrl.lastState && Date.now() < giveUpAt && !signal?.aborted) {
      const untilDeadline = s.deadline ? s.deadline.getTime() - Date.now() + 50 : Infinity;
      const timer = new Promise<void>((r) => setTimeout(r, Math.max(0, Math.min(untilDeadline, giveUpAt - Date.now()))));
      await Promise.race([watch.promise, timer]);
      watch.cancel();
      watch = nextChange(ctrl.machineId, giveUpAt - Date.now());
      s = await snapshot(ctrl, new Date());
    }
  } finally {
    watch.cancel();
  }
  const key = keyOf(s);
  if (key !== ctrl.lastState) await db()('controllers').where({ id: ctrl.id }).update({ last_state: key });
  return answerOf(s);
}
