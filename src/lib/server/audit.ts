/** The append-only audit log: who changed what, when, with the state before and after. */
import type { Knex } from 'knex';
import { db } from './db';

export interface AuditEntry {
  actorId: string | null;
  kind: string;
  subjectType: string;
  subjectId?: string | null;
  summary: string;
  before?: unknown;
  after?: unknown;
}

export async function recordAudit(trx: Knex | Knex.Transaction, e: AuditEntry): Promise<void> {
  await trx('audit_log').insert({
    actor_id: e.actorId,
    kind: e.kind,
    subject_type: e.subjectType,
    subject_id: e.subjectId ?? null,
    summary: e.summary,
    before: e.before === undefined ? null : JSON.stringify(e.before),
    after: e.after === undefined ? null : JSON.stringify(e.after),
  });
}

export interface AuditRow {
  id: number;
  at: Date;
  actorId: string | null;
  actorName: string | null;
  kind: string;
  subjectType: string;
  subjectId: string | null;
  summary: string;
  before: unknown;
  after: unknown;
}

export async function listAudit(filter: { actorId?: string; kind?: string; from?: Date; to?: Date; page: number; pageSize: number }): Promise<{ rows: AuditRow[]; total: number }> {
  const q = db()('audit_log as a').leftJoin('people as p', 'p.id', 'a.actor_id');
  if (filter.actorId) q.where('a.actor_id', filter.actorId);
  if (filter.kind) q.where('a.kind', filter.kind);
  if (filter.from) q.where('a.at', '>=', filter.from);
  if (filter.to) q.where('a.at', '<', filter.to);
  const [countRow] = await q.clone().count<{ count: number }[]>({ count: '*' });
  const rows = await q
    .select('a.id', 'a.at', 'a.actor_id', 'p.name as actor_name', 'a.kind', 'a.subject_type', 'a.subject_id', 'a.summary', 'a.before', 'a.after')
    .orderBy('a.at', 'desc')
    .orderBy('a.id', 'desc')
    .limit(filter.pageSize)
    .offset((filter.page - 1) * filter.pageSize);
  return {
    total: Number(countRow?.count ?? 0),
    rows: rows.map((r) => ({
      id: r.id,
      at: r.at,
      actorId: r.actor_id,
      actorName: r.actor_name,
      kind: r.kind,
      subjectType: r.subject_type,
      subjectId: r.subject_id,
      summary: r.summary,
      before: r.before,
      after: r.after,
    })),
  };
}
