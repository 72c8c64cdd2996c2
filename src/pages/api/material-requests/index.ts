import { z } from '@lib/zod';
import { DomainError, json, parseWith, readMultipart, requireSignedIn, route } from '@lib/server/http';
import { createRequest, listRequests, SDS_MAX_BYTES, type MaterialRequest } from '@lib/server/material-requests';
import { hasAnyRole } from '@lib/roles';
import { materialMode } from '@lib/material-schemas';

const fields = z
  .object({
    name: z.string().trim().min(1, 'Name the material.').max(120, 'Use at most 120 characters.'),
    supplier: z.string().trim().min(1, 'Name the supplier.').max(120, 'Use at most 120 characters.'),
    composition: z.string().trim().min(1, 'Enter the chemical formula from the safety data sheet.').max(200, 'Use at most 200 characters.'),
    thicknessMm: z.coerce.number({ error: 'Thickness must be a number.' }).gt(0, 'Thickness must be above 0 mm.').max(100, 'Thickness must be at most 100 mm.'),
    mode: materialMode,
  })
  .strict();

export function requestJson(r: MaterialRequest) {
  return {
    id: r.id, name: r.name, supplier: r.supplier, composition: r.composition, thicknessMm: r.thicknessMm, mode: r.mode,
    requesterName: r.requesterName, sdsFilename: r.sdsFilename, sdsBytes: r.sdsBytes, sdsUrl: `/api/material-requests/${r.id}/sds`,
    screenVerdict: r.screenVerdict, screenReason: r.screenReason, status: r.status, decidedByName: r.decidedByName,
    decidedAt: r.decidedAt?.toISOString() ?? null, decisionReason: r.decisionReason, materialId: r.materialId,
    createdAt: r.createdAt.toISOString(),
  };
}

/** GET /api/material-requests?status= → stewards and admins: every request; members: their own. */
export const GET = route(async ({ locals, url }) => {
  const person = requireSignedIn(locals);
  const status = z.enum(['pending', 'approved', 'refused']).optional().parse(url.searchParams.get('status') ?? undefined);
  const reviewer = hasAnyRole(person.roles, ['steward', 'admin']);
  const rows = await listRequests({ ...(reviewer ? {} : { requesterId: person.id }), ...(status ? { status } : {}) });
  return json(rows.map(requestJson));
});

/**
 * POST /api/material-requests (signed in; multipart/form-data: name, supplier, composition, thicknessMm, mode, sds=PDF file)
 * → 201 the request with its screening verdict. The file must be a PDF by content, at most 10 MB; programs are refused.
 */
export const POST = route(async ({ locals, request }) => {
  const person = requireSignedIn(locals);
  const form = await readMultipart(request, {
    what: 'the request, with the safety data sheet attached,',
    maxBytes: SDS_MAX_BYTES + 64 * 1024,
    tooLarge: 'The safety data sheet is larger than 10 MB.',
  });
  const [file] = form.files('sds');
  const input = parseWith(fields, {
    name: form.value('name'), supplier: form.value('supplier'), composition: form.value('composition'),
    thicknessMm: form.value('thicknessMm'), mode: form.value('mode'),
  });
  if (!file) throw new DomainError('invalid', 'invalid', 'Attach the supplier\'s safety data sheet (PDF).', { sds: 'Attach the safety data sheet as a PDF.' });
  if (file.size > SDS_MAX_BYTES) throw new DomainError('too_large', 'file_too_large', 'The safety data sheet is larger than 10 MB.');
  const created = await createRequest(person.id, { ...input, sds: { filename: file.name, bytes: new Uint8Array(await file.arrayBuffer()) } });
  return json(requestJson(created), 201);
});
