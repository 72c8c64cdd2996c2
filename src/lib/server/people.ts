/** People and their roles: all SQL for this area. */
import type { Knex } from 'knex';
import { db, pgCode, PG, prepared, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { hashPassword } from './passwords';
import { normaliseRoles, type Role } from '@lib/roles';
import { DomainError } from './errors';
import type { Tier } from '@lib/vocabulary';

export interface Person {
  id: string;
  email: string;
  name: string;
  roles: Role[];
  active: boolean;
  createdAt: Date;
  /** pricing tier (billing) */
  tier: Tier;
  /** course code or department a recharge tier is billed to */
  costCentre: string | null;
  /** false until the person opened the link in their confirmation (or invitation) e-mail */
  emailConfirmed: boolean;
  /** raised when every earlier session must end (password reset or change, account closed) */
  sessionEpoch: number;
}

type Row = { id: string; email: string; name: string; active: boolean; created_at: Date; roles: string[] | null; tier: Tier; cost_centre: string | null; email_confirmed_at: Date | null; session_epoch: number };

function toPerson(r: Row): Person {
  return { id: r.id, email: r.email, name: r.name, active: r.active, createdAt: r.created_at, roles: normaliseRoles(r.roles ?? []), tier: r.tier, costCentre: r.cost_centre, emailConfirmed: r.email_confirmed_at !== null, sessionEpoch: r.session_epoch };
}

function withRoles(q: Conn) {
  return q('people as p')
    .leftJoin('role_grants as g', 'g.person_id', 'p.id')
    .groupBy('p.id')
    .select('p.id', 'p.email', 'p.name', 'p.active', 'p.created_at', 'p.tier', 'p.cost_centre', 'p.email_confirmed_at', 'p.session_epoch', q.raw("coalesce(array_agg(g.role ORDER BY g.role) FILTER (WHERE g.role IS NOT NULL), '{}') AS roles"));
}

export async function getPerson(id: string, trx: Conn = db()): Promise<Person | null> {
  // every signed-in request runs it (session.ts): parsed and planned once per connection
  const row = (await prepared(withRoles(trx).where('p.id', id).first())) as Row | undefined;
  return row ? toPerson(row) : null;
}

export async function getPersonByEmail(email: string): Promise<Person | null> {
  const row = (await withRoles(db()).whereRaw('lower(p.email) = lower(?)', [email]).first()) as Row | undefined;
  return row ? toPerson(row) : null;
}

export async function findForSignIn(email: string): Promise<{ id: string; email: string; name: string; passwordHash: string; active: boolean; emailConfirmed: boolean } | null> {
  const row = await db()('people').whereRaw('lower(email) = lower(?)', [email]).first('id', 'email', 'name', 'password_hash', 'active', 'email_confirmed_at');
  return row ? { id: row.id, email: row.email, name: row.name, passwordHash: row.password_hash, active: row.active, emailConfirmed: row.email_confirmed_at !== null } : null;
}

export class EmailTaken extends Error {}

/**
 * Creates a person with the given roles (sign-up gives `member`). Throws EmailTaken on a duplicate.
 * `confirmed: false` (sign-up, invitation) keeps them out until they open the link e-mailed to them; `then`
 * runs inside the same transaction (e.g. to issue that link and queue the e-mail).
 */
export async function createPerson(input: {
  email: string;
  name: string;
  password: string;
  roles: Role[];
  actorId?: string | null;
  confirmed?: boolean;
  tier?: Tier;
  then?: (trx: Knex.Transaction, person: Person) => Promise<void>;
}): Promise<Person> {
  const passwordHash = await hashPassword(input.password);
  try {
    return await transaction(async (trx) => {
      const [row] = await trx('people')
        .insert({
          email: input.email.toLowerCase(),
          name: input.name,
          password_hash: passwordHash,
          ...(input.confirmed === false ? { email_confirmed_at: null } : {}),
          ...(input.tier ? { tier: input.tier } : {}),
        })
        .returning('id');
      const id = row.id as string;
      if (input.roles.length) {
        await trx('role_grants').insert(input.roles.map((role) => ({ person_id: id, role, granted_by: input.actorId ?? null })));
      }
      await recordAudit(trx, {
        actorId: input.actorId ?? id,
        kind: 'person.created',
        subjectType: 'person',
        subjectId: id,
        summary: `${input.name} <${input.email}> joined with roles ${input.roles.join(', ') || 'none'}`,
        after: { email: input.email, name: input.name, roles: input.roles, ...(input.tier ? { tier: input.tier } : {}) },
      });
      const person = await getPerson(id, trx);
      if (!person) throw new Error('person vanished inside its own transaction');
      if (input.then) await input.then(trx, person);
      return person;
    });
  } catch (err) {
    if (pgCode(err) === PG.uniqueViolation) throw new EmailTaken();
    throw err;
  }
}

export type PeopleSort = 'name' | 'email' | 'created';

export async function listPeople(opts: { q?: string; role?: Role; page: number; pageSize: number; sort: PeopleSort; dir: 'asc' | 'desc' }): Promise<{ rows: Person[]; total: number }> {
  const base = db()('people as p');
  if (opts.q) {
    const like = `%${opts.q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`;
    base.where((w) => w.whereILike('p.name', like).orWhereILike('p.email', like));
  }
  if (opts.role) base.whereExists(db()('role_grants as r').whereRaw('r.person_id = p.id').where('r.role', opts.role));
  const [{ count }] = (await base.clone().count({ count: '*' })) as [{ count: number }];
  const column = { name: 'p.name', email: 'p.email', created: 'p.created_at' }[opts.sort];
  const ids = await base.clone().select('p.id').orderBy(column, opts.dir).orderBy('p.id').limit(opts.pageSize).offset((opts.page - 1) * opts.pageSize);
  const rows = (await withRoles(db()).whereIn('p.id', ids.map((r) => r.id))) as Row[];
  const byId = new Map(rows.map((r) => [r.id, toPerson(r)]));
  return { total: Number(count), rows: ids.map((r) => byId.get(r.id)).filter((p): p is Person => Boolean(p)) };
}

/** Replaces a person's roles; each grant and removal is audited. An admin cannot remove their own admin role. */
export async function setRoles(actorId: string, personId: string, roles: Role[]): Promise<Person> {
  const wanted = normaliseRoles(roles);
  return transaction(async (trx) => {
    const target = await trx('people').where({ id: personId }).forUpdate().first('id', 'name');
    if (!target) throw new DomainError('not_found', 'not_found', 'No person has that id.');
    const current = normaliseRoles((await trx('role_grants').where({ person_id: personId }).pluck('role')) as string[]);
    if (actorId === personId && current.includes('admin') && !wanted.includes('admin')) {
      throw new DomainError('conflict', 'cannot_remove_own_admin', 'You cannot remove your own admin role; ask another admin to do it.');
    }
    const added = wanted.filter((r) => !current.includes(r));
    const removed = current.filter((r) => !wanted.includes(r));
    if (removed.length) await trx('role_grants').where({ person_id: personId }).whereIn('role', removed).delete();
    if (added.length) await trx('role_grants').insert(added.map((role) => ({ person_id: personId, role, granted_by: actorId })));
    if (added.length || removed.length) {
      await recordAudit(trx, {
        actorId,
        kind: 'role.changed',
        subjectType: 'person',
        subjectId: personId,
        summary: `Roles of ${target.name}: ${[...added.map((r) => `+${r}`), ...removed.map((r) => `−${r}`)].join(' ')}`,
        before: { roles: current },
        after: { roles: wanted },
      });
    }
    const person = await getPerson(personId, trx);
    if (!person) throw new DomainError('not_found', 'not_found', 'No person has that id.');
    return person;
  });
}

/** Sets `active` on a locked person row and audits the change; false when it was already so. */
export async function applyActive(trx: Knex.Transaction, actorId: string, personId: string, active: boolean): Promise<boolean> {
  const target = await trx('people').where({ id: personId }).forUpdate().first('id', 'name', 'email', 'active');
  if (!target) throw new DomainError('not_found', 'not_found', 'No person has that id.');
  if (target.active === active) return false;
  await trx('people').where({ id: personId }).update({ active, deactivated_at: active ? null : trx.fn.now(), updated_at: trx.fn.now() });
  await recordAudit(trx, {
    actorId,
    kind: active ? 'person.reactivated' : 'person.deactivated',
    subjectType: 'person',
    subjectId: personId,
    summary: `${target.name} <${target.email}> ${active ? 'reactivated' : 'deactivated'}`,
    before: { active: target.active },
    after: { active },
  });
  return true;
}

export async function mustGetPerson(personId: string, trx: Knex.Transaction): Promise<Person> {
  const person = await getPerson(personId, trx);
  if (!person) throw new DomainError('not_found', 'not_found', 'No person has that id.');
  return person;
}


/** Lets a deactivated person sign in again (admin). Audited as `person.reactivated`. */
export async function reactivatePerson(actorId: string, personId: string): Promise<Person> {
  return transaction(async (trx) => {
    await applyActive(trx, actorId, personId, true);
    return mustGetPerson(personId, trx);
  });
}

/** Sets a person's pricing tier and cost centre (billing); audited. */
export async function setTier(actorId: string, personId: string, tier: Tier, costCentre: string | null): Promise<Person> {
  return transaction(async (trx) => {
    const target = await trx('people').where({ id: personId }).forUpdate().first('id', 'name', 'tier', 'cost_centre');
    if (!target) throw new DomainError('not_found', 'not_found', 'No person has that id.');
    if (target.tier !== tier || target.cost_centre !== costCentre) {
      await trx('people').where({ id: personId }).update({ tier, cost_centre: costCentre, updated_at: trx.fn.now() });
      await recordAudit(trx, {
        actorId,
        kind: 'person.tier_changed',
        subjectType: 'person',
        subjectId: personId,
        summary: `Tier of ${target.name}: ${target.tier} → ${tier}${costCentre !== target.cost_centre ? `, cost centre ${target.cost_centre ?? 'none'} → ${costCentre ?? 'none'}` : ''}`,
        before: { tier: target.tier, costCentre: target.cost_centre },
        after: { tier, costCentre },
      });
    }
    const person = await getPerson(personId, trx);
    if (!person) throw new DomainError('not_found', 'not_found', 'No person has that id.');
    return person;
  });
}

/** Active people holding `role`, for the e-mails sent to a role (stewards on a fault, upkeep falling due). */
export async function activeWithRole(role: Role, trx: Conn = db()): Promise<{ email: string; name: string }[]> {
  return trx('people as p')
    .join('role_grants as g', 'g.person_id', 'p.id')
    .where({ 'g.role': role, 'p.active': true })
    .distinct('p.email', 'p.name')
    .orderBy('p.email');
}
