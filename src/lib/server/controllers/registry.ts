/**
 * Controllers at the machines: registration (device tokens shown once, stored as SHA-256), the walk-up setting and
 * the device's sign-in by token. The device calls live beside: authorize.ts, state.ts, release.ts, offline-alert.ts;
 * check-in and check-out go through machine-sessions.ts, exactly as from the phone.
 */
import { createHash, randomBytes } from 'node:crypto';
import { db, transaction, type Conn } from '@lib/server/db';
import { recordAudit } from '@lib/server/audit';
import { DomainError } from '@lib/server/errors';
import { CONTROLLER_OFFLINE_MINUTES } from '@lib/controller-rules';

export interface Controller {
  id: string;
  machineId: string;
  name: string;
  firmware: string | null;
  lastState: string | null;
  lastSeenAt: Date | null;
  revokedAt: Date | null;
  createdAt: Date;
}

type Row = {
  id: string; machine_id: string; name: string; token_hash: string; firmware: string | null; last_state: string | null;
  last_seen_at: Date | null; offline_alerted_at: Date | null; revoked_at: Date | null; created_at: Date;
};

function toController(r: Row): Controller {
  return { id: r.id, machineId: r.machine_id, name: r.name, firmware: r.firmware, lastState: r.last_state, lastSeenAt: r.last_seen_at, revokedAt: r.revoked_at, createdAt: r.created_at };
}

const sha256 = (s: string) => createHash('sha256').update(s).digest('hex');

function newToken(): { token: string; hash: string } {
  const token = `bwc_${randomBytes(32).toString('base64url')}`;
  return { token, hash: sha256(token) };
}

// ---------------------------------------------------------------------------------------------
// Administration

export interface ControllerListRow extends Controller {
  machineName: string;
  machineCode: string;
  online: boolean;
}

export async function listControllers(now = new Date()): Promise<ControllerListRow[]> {
  const rows = (await db()('controllers as c')
    .join('machines as m', 'm.id', 'c.machine_id')
    .orderByRaw('c.revoked_at IS NOT NULL, m.name, c.name')
    .select('c.*', 'm.name as machine_name', 'm.code as machine_code')) as (Row & { machine_name: string; machine_code: string })[];
  const offlineBefore = now.getTime() - CONTROLLER_OFFLINE_MINUTES * 60_000;
  return rows.map((r) => ({
    ...toController(r),
    machineName: r.machine_name,
    machineCode: r.machine_code,
    online: !r.revoked_at && !!r.last_seen_at && r.last_seen_at.getTime() >= offlineBefore,
  }));
}

/** Registers a controller for a machine; the token is in the answer only, never stored or shown again. */
export async function createController(actorId: string, input: { machineId: string; name: string }): Promise<{ id: string; token: string }> {
  return transaction(async (trx) => {
    const m = await trx('machines').where({ id: input.machineId }).first('id', 'name', 'retired_at');
    if (!m) throw new DomainError('invalid', 'invalid', 'Choose a machine.', { machineId: 'No such machine.' });
    if (m.retired_at) throw new DomainError('conflict', 'machine_retired', `${m.name} is retired.`);
    const { token, hash } = newToken();
    const [row] = (await trx('controllers').insert({ machine_id: m.id, name: input.name, token_hash: hash, created_by: actorId }).returning('*')) as Row[];
    await recordAudit(trx, { actorId, kind: 'controller.registered', subjectType: 'controller', subjectId: row!.id, summary: `Registered controller “${input.name}” on ${m.name}`, after: { machineId: m.id, name: input.name } });
    return { id: row!.id, token };
  });
}

/** A new token for the controller; the old one stops working at once. */
export async function rotateToken(actorId: string, id: string): Promise<{ id: string; token: string }> {
  return transaction(async (trx) => {
    const r = (await trx('controllers').where({ id }).forUpdate().first()) as Row | undefined;
    if (!r) throw new DomainError('not_found', 'not_found', 'No such controller.');
    if (r.revoked_at) throw new DomainError('conflict', 'controller_revoked', 'This controller is revoked; register a new one.');
    const { token, hash } = newToken();
    await trx('controllers').where({ id }).update({ token_hash: hash, token_rotated_at: trx.fn.now(), last_state: null });
    await recordAudit(trx, { actorId, kind: 'controller.token_rotated', subjectType: 'controller', subjectId: id, summary: `New device token for controller “${r.name}”` });
    return { id, token };
  });
}

export async function revokeController(actorId: string, id: string): Promise<Controller> {
  return transaction(async (trx) => {
    const r = (await trx('controllers').where({ id }).forUpdate().first()) as Row | undefined;
    if (!r) throw new DomainError('not_found', 'not_found', 'No such controller.');
    if (r.revoked_at) return toController(r);
    const [u] = (await trx('controllers').where({ id }).update({ revoked_at: trx.fn.now() }).returning('*')) as Row[];
    await recordAudit(trx, { actorId, kind: 'controller.revoked', subjectType: 'controller', subjectId: id, summary: `Revoked controller “${r.name}”` });
    await trx.raw(`SELECT pg_notify('controller_state', ?)`, [r.machine_id]);
    return toController(u!);
  });
}

export async function walkUpsAllowed(trx: Conn = db()): Promise<boolean> {
  const r = await trx('site_settings').where({ id: 1 }).first('walk_ups_allowed');
  return Boolean(r?.walk_ups_allowed);
}

export async function setWalkUpsAllowed(actorId: string, allowed: boolean): Promise<boolean> {
  return transaction(async (trx) => {
    const before = await walkUpsAllowed(trx);
    await trx('site_settings').where({ id: 1 }).update({ walk_ups_allowed: allowed });
    if (before !== allowed) {
      await recordAudit(trx, { actorId, kind: 'site.walk_ups_changed', subjectType: 'site', summary: allowed ? 'Walk-ups at the controllers allowed' : 'Walk-ups at the controllers stopped', before: { walkUpsAllowed: before }, after: { walkUpsAllowed: allowed } });
    }
    return allowed;
  });
}

// ---------------------------------------------------------------------------------------------
// Device authentication

/** The controller holding `authorization` (a `Bearer <token>` header), marked as seen now; 401 otherwise. */
export async function authenticate(authorization: string | null): Promise<Controller> {
  const m = /^Bearer\s+(\S+)$/i.exec(authorization ?? '');
  if (!m) throw new DomainError('unauthenticated', 'token_required', 'Send the device token: Authorization: Bearer <token>.', undefined, { challenge: 'Bearer' });
  const [row] = (await db()('controllers')
    .where({ token_hash: sha256(m[1]!) })
    .whereNull('revoked_at')
    .update({ last_seen_at: db().fn.now() })
    .returning('*')) as Row[];
  if (!row) throw new DomainError('unauthenticated', 'invalid_token', 'This device token is not valid (wrong, rotated or revoked).', undefined, { challenge: 'Bearer error="invalid_token"' });
  return toController(row);
}
