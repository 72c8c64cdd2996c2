/**
 * New-material requests: a member names a material nobody has listed, with the supplier's safety data sheet
 * (PDF, stored in object storage); the halogen screen runs at once; a steward or admin approves it into the
 * catalogue with a rule, or refuses it with a reason. The requester is e-mailed either way.
 */
import { randomUUID } from 'node:crypto';
import { db, transaction, type Conn } from './db';
import { recordAudit } from './audit';
import { DomainError } from './errors';
import { queueMail } from './mail';
import { env } from './env';
import { checkUpload } from './file-types';
import { getObject, putObject } from './storage';
import { createMaterial, type Material, type MaterialInput } from './materials';
import { FormulaError, screenComposition, screenMaterial, type ScreenResult } from '@lib/halogen-screen';
import type { MaterialMode } from '@lib/material-rules';

export const SDS_MAX_BYTES = 10 * 1024 * 1024;

export type RequestStatus = 'pending' | 'approved' | 'refused';

export interface MaterialRequest {
  id: string;
  requesterId: string;
  requesterName: string;
  requesterEmail: string;
  name: string;
  supplier: string;
  composition: string;
  thicknessMm: number;
  mode: MaterialMode;
  sdsFilename: string;
  sdsBytes: number;
  screenVerdict: 'blocked' | 'review';
  screenReason: string;
  status: RequestStatus;
  decidedByName: string | null;
  decidedAt: Date | null;
  decisionReason: string | null;
  materialId: string | null;
  createdAt: Date;
}

type Row = {
  id: string; requester_id: string; requester_name: string; requester_email: string; name: string; supplier: string;
  composition: string; thickness_mm: number; mode: MaterialMode; sds_key: string; sds_filename: string; sds_bytes: number;
  screen_verdict: 'blocked' | 'review'; screen_reason: string; status: RequestStatus; decided_by_name: string | null;
  decided_at: Date | null; decision_reason: string | null; material_id: string | null; created_at: Date;
};

function toRequest(r: Row): MaterialRequest {
  return {
    id: r.id, requesterId: r.requester_id, requesterName: r.requester_name, requesterEmail: r.requester_email, name: r.name,
    supplier: r.supplier, composition: r.composition, thicknessMm: Number(r.thickness_mm), mode: r.mode,
    sdsFilename: r.sds_filename, sdsBytes: r.sds_bytes, screenVerdict: r.screen_verdict, screenReason: r.screen_reason,
    status: r.status, decidedByName: r.decided_by_name, decidedAt: r.decided_at, decisionReason: r.decision_reason,
    materialId: r.material_id, createdAt: r.created_at,
  };
}

function base(q: Conn) {
  return q('material_requests as r')
    .join('people as p', 'p.id', 'r.requester_id')
    .leftJoin('people as d', 'd.id', 'r.decided_by')
    .select('r.*', 'p.name as requester_name', 'p.email as requester_email', 'd.name as decided_by_name');
}

/** Screens a composition; a formula that cannot be read is 422 invalid_formula with the parser's message. */
export function screenOrThrow(composition: string): ScreenResult {
  try {
    return screenComposition(composition);
  } catch (err) {
    if (err instanceof FormulaError) throw new DomainError('invalid', 'invalid_formula', err.message, { composition: err.message });
    throw err;
  }
}

/** Screens a name and/or a composition together (a recognised name such as PVC blocks whatever formula is typed). */
export function screenMaterialOrThrow(name: string | null, composition: string | null): ScreenResult {
  try {
    return screenMaterial({ name, composition });
  } catch (err) {
    if (err instanceof FormulaError) throw new DomainError('invalid', 'invalid_formula', err.message, { composition: err.message });
    throw err;
  }
}

export interface NewRequest {
  name: string;
  supplier: string;
  composition: string;
  thicknessMm: number;
  mode: MaterialMode;
  sds: { filename: string; bytes: Uint8Array };
}

export async function createRequest(requesterId: string, input: NewRequest): Promise<MaterialRequest> {
  const screen = screenMaterialOrThrow(input.name, input.composition);
  await checkUpload(input.sds.bytes, ['application/pdf'], 'safety data sheet', SDS_MAX_BYTES);
  const id = randomUUID();
  const key = `sds/${id}.pdf`;
  await putObject(key, input.sds.bytes, 'application/pdf');
  const filename = input.sds.filename.replace(/[^\w.\- ()]+/g, '_').slice(0, 120) || 'safety-data-sheet.pdf';
  return transaction(async (t) => {
    await t('material_requests').insert({
      id, requester_id: requesterId, name: input.name, supplier: input.supplier, composition: input.composition,
      thickness_mm: input.thicknessMm, mode: input.mode, sds_key: key, sds_filename: filename, sds_bytes: input.sds.bytes.byteLength,
      screen_verdict: screen.verdict, screen_reason: screen.reason,
    });
    await recordAudit(t, {
      actorId: requesterId, kind: 'material_request.created', subjectType: 'material_request', subjectId: id,
      summary: `Asked for ${input.name} (${input.supplier}) to be reviewed; screening: ${screen.verdict}`,
      after: { name: input.name, supplier: input.supplier, composition: input.composition, verdict: screen.verdict },
    });
    return toRequest((await base(t).where('r.id', id).first()) as Row);
  });
}

/** Stewards and admins see every request (pending first); a member sees their own. */
export async function listRequests(opts: { requesterId?: string; status?: RequestStatus }): Promise<MaterialRequest[]> {
  const q = base(db());
  if (opts.requesterId) q.where('r.requester_id', opts.requesterId);
  if (opts.status) q.where('r.status', opts.status);
  const rows = (await q.orderByRaw("(r.status = 'pending') DESC").orderBy('r.created_at', 'desc').limit(200)) as Row[];
  return rows.map(toRequest);
}

export async function getRequest(id: string): Promise<(MaterialRequest & { sdsKey: string }) | null> {
  const row = (await base(db()).where('r.id', id).first()) as Row | undefined;
  return row ? { ...toRequest(row), sdsKey: row.sds_key } : null;
}

/** The stored safety data sheet of a request. */
export async function getRequestSds(id: string): Promise<{ bytes: Uint8Array; filename: string } | null> {
  const r = await getRequest(id);
  if (!r) return null;
  const obj = await getObject(r.sdsKey);
  return obj ? { bytes: obj.bytes, filename: r.sdsFilename } : null;
}

export type Decision =
  | { decision: 'approve'; material: Omit<MaterialInput, 'name' | 'composition'> & { name?: string; composition?: string[] } }
  | { decision: 'refuse'; reason: string };

export async function decideRequest(actorId: string, id: string, d: Decision): Promise<{ request: MaterialRequest; material: Material | null }> {
  return transaction(async (t) => {
    const row = (await t('material_requests').where({ id }).forUpdate().first()) as { status: RequestStatus; name: string; composition: string } | undefined;
    if (!row) throw new DomainError('not_found', 'not_found', 'No request has that id.');
    if (row.status !== 'pending') throw new DomainError('conflict', 'already_decided', `This request was already ${row.status}.`);
    let material: Material | null = null;
    if (d.decision === 'approve') {
      const composition = d.material.composition ?? row.composition.split('+').map((s) => s.trim()).filter(Boolean);
      material = await createMaterial(actorId, { ...d.material, name: d.material.name ?? row.name, composition }, t);
      await t('material_requests').where({ id }).update({ status: 'approved', decided_by: actorId, decided_at: t.fn.now(), decision_reason: material.reason, material_id: material.id });
    } else {
      await t('material_requests').where({ id }).update({ status: 'refused', decided_by: actorId, decided_at: t.fn.now(), decision_reason: d.reason });
    }
    const request = toRequest((await base(t).where('r.id', id).first()) as Row);
    await recordAudit(t, {
      actorId, kind: `material_request.${request.status}`, subjectType: 'material_request', subjectId: id,
      summary: `${request.status === 'approved' ? 'Approved' : 'Refused'} the request for ${request.name}${material ? ` as ${material.rule}` : ''}`,
      after: { status: request.status, reason: request.decisionReason, materialId: request.materialId },
    });
    const url = `${env().PUBLIC_BASE_URL}/materials`;
    const paragraphs = request.status === 'approved'
      ? [
          `Your request for ${request.name} was approved and it is now in the catalogue as ${material!.rule}.`,
          `What members read: ${material!.reason}`,
          material!.modes.length ? `Allowed for: ${material!.modes.join(', ')}.` : 'It may not be used on the machines.',
        ]
      : [`Your request for ${request.name} was refused.`, `Reason: ${request.decisionReason}`];
    await queueMail(t, request.requesterEmail, `Material request ${request.status}: ${request.name}`, {
      greeting: `Hello ${request.requesterName},`,
      paragraphs,
      action: { label: 'See the Materials screen', url },
      footnote: 'Only put under the beam what the Materials screen allows. Your laser safety officer and local rules take precedence.',
    });
    return { request, material };
  });
}
