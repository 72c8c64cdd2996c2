/** The append-only audit log: who changed what, when, with the state before and after. */
import { db, type Conn } from './db';
import type { AuditRow } from '@lib/audit-filter';

export interface AuditEntry {
  actorId: string | null;
  kind: string;
  subjectType: string;
  subjectId?: string | null;
  summary: string;
  before?: unknown;
  after?: unknown;
}

/** before/after as jsonb text (null when not given). */
const asJson = (v: unknown) => (v === undefined ? null : JSON.stringify(v));

export async function recordAudit(trx: Conn, e: AuditEntry): Promise<void> {
  await trx('audit_log').insert({
    actor_id: e.actorId,
    kind: e.kind,
    subject_type: e.subjectType,
    subject_id: e.subjectId ?? null,
    summary: e.summary,
    before: asJson(e.before),
    after: asJson(e.after),
  });
}

/**
 * recordAudit's row as the body of a data-modifying WITH item, for a statement that writes the subject too: the
 * subject's id is `subjectIdSql`, an SQL expression over the one row of `fromSql` (e.g. `b.id` from a sibling
 * `INSERT … RETURNING` named b). The row goes in with that statement, without a round trip of its own.
 */
export function auditInsertSql(e: Omit<AuditEntry, 'subjectId'>, subjectIdSql: string, fromSql: string): { sql: string; bindings: unknown[] } {
  return {
    sql: `INSERT INTO audit_log (actor_id, kind, subject_type, subject_id, summary, before, after)
          SELECT ?::uuid, ?, ?, (${subjectIdSql})::text, ?, ?::jsonb, ?::jsonb FROM ${fromSql}`,
    bindings: [e.actorId, e.kind, e.subjectType, e.summary, asJson(e.before), asJson(e.after)],
  };
}


export type AuditSort = 'at' | 'kind' | 'actor';

export interface AuditFilter {
  actorId?: string;
  kind?: string;
  /** Free text found in the summary, the kind or the actor's name or e-mail. */
  q?: string;
  /** Instants: rows with from <= at < to. */
  from?: Date;
  to?: Date;
}

function filtered(filter: AuditFilter) {
  const q = db()('audit_log as a').leftJoin('people as p', 'p.id', 'a.actor_id');
  if (filter.actorId) q.where('a.actor_id', filter.actorId);
  if (filter.kind) q.where('a.kind', filter.kind);
  if (filter.from) q.where('a.at', '>=', filter.from);
  if (filter.to) q.where('a.at', '<', filter.to);
  if (filter.q) {
    const like = `%${filter.q.replace(/[\\%_]/g, (c) => `\\${c}`)}%`;
    q.where((w) => w.whereILike('a.summary', like).orWhereILike('a.kind', like).orWhereILike('p.name', like).orWhereILike('p.email', like));
  }
  return q;
}

const SELECT = ['a.id', 'a.at', 'a.actor_id', 'p.name as actor_name', 'a.kind', 'a.subject_type', 'a.subject_id', 'a.summary', 'a.before', 'a.after'];

function toRow(r: Record<string, any>): AuditRow {
  return {
    id: Number(r.id),
    at: r.at,
    actorId: r.actor_id,
    actorName: r.actor_name,
    kind: r.kind,
    subjectType: r.subject_type,
    subjectId: r.subject_id,
    summary: r.summary,
    before: r.before,
    after: r.after,
  };
}

/** A page of the audit log, newest first unless sorted otherwise. */
export async function listAudit(
  filter: AuditFilter & { page: number; pageSize: number; sort?: AuditSort; dir?: 'asc' | 'desc' },
): Promise<{ rows: AuditRow[]; total: number }> {
  const q = filtered(filter);
  const [countRow] = await q.clone().count<{ count: number }[]>({ count: '*' });
  const dir = filter.dir ?? 'desc';
  const ordered = q.clone().select(SELECT);
  if (filter.sort === 'kind') ordered.orderBy('a.kind', dir);
  else if (filter.sort === 'actor') ordered.orderByRaw(`p.name ${dir === 'asc' ? 'ASC' : 'DESC'} NULLS LAST`);
  const rows = await ordered
    .orderBy('a.at', filter.sort === 'at' || !filter.sort ? dir : 'desc')
    .orderBy('a.id', filter.sort === 'at' || !filter.sort ? dir : 'desc')
    .limit(filter.pageSize)
    .offset((filter.page - 1) * filter.pageSize);
  return { total: Number(countRow?.count ?? 0), rows: rows.map(toRow) };
}

/** Every row that matches, newest first, read in batches (for the CSV export of a long log). */
export async function* iterateAudit(filter: AuditFilter, batchSize = 2000): AsyncGenerator<AuditRow> {
  // the cursor keeps `at` as PostgreSQL's own text (microseconds), which a JS Date would round to ms
  let cursor: { at: string; id: number } | null = null;
  for (;;) {
    const q = filtered(filter).select([...SELECT, db().raw('a.at::text AS at_text')]);
    if (cursor) q.whereRaw('(a.at, a.id) < (?::timestamptz, ?)', [cursor.at, cursor.id]);
    const batch = await q.orderBy('a.at', 'desc').orderBy('a.id', 'desc').limit(batchSize);
    for (const r of batch) yield toRow(r);
    if (batch.length < batchSize) return;
    const last = batch[batch.length - 1]!;
    cursor = { at: String(last.at_text), id: Number(last.id) };
  }
}

/** What the Audit screen offers in its filters: the kinds written so far, and the people who acted. */
export async function auditFacets(): Promise<{ kinds: string[]; actors: { id: string; name: string; email: string }[] }> {
  const kinds = (await db()('audit_log').distinct('kind').orderBy('kind').pluck('kind')) as string[];
  const actors = await db()('people as p')
    .whereExists(db()('audit_log as a').whereRaw('a.actor_id = p.id'))
    .orderBy('p.name')
    .select('p.id', 'p.name', 'p.email');
  return { kinds, actors };
}
