import { json, parseWith, readMultipart, requireSignedIn, route } from '@lib/server/http';
import { MAX_PHOTOS, PHOTO_MAX_BYTES, photoUploads } from '@lib/server/faults/photos';
import { reportFault } from '@lib/server/faults/reporting';
import { faultReportFields } from '@lib/faults-shared';
import { faultJson } from '@lib/server/fault-json';

/**
 * POST /api/machines/:idOrCode/faults (signed in; multipart/form-data: summary, details?, severity, clientId?, photos[] up to 3)
 * → 201 { fault, machineStatus, bumpedBookings, statusBefore, duplicate: false }. The same clientId (a UUID the phone
 * made) sent again by the same person → 200 with the fault already filed (duplicate: true): no second row, no e-mail. 413 for a photo over 8 MB, 415 for anything that is not an image by
 * its content, 422 too_many_photos for more than 3.
 */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireSignedIn(locals);
  const form = await readMultipart(request, {
    what: 'the report',
    maxBytes: (MAX_PHOTOS + 1) * PHOTO_MAX_BYTES,
    tooLarge: `Each photo may be at most ${PHOTO_MAX_BYTES / 1024 / 1024} MB.`,
  });
  const input = parseWith(faultReportFields, {
    summary: form.value('summary'),
    details: form.value('details'),
    severity: form.value('severity'),
    clientId: form.value('clientId') || undefined,
  });
  const photos = await photoUploads(form.files('photos', 'photos[]'));
  const r = await reportFault(person, params.id ?? '', input, photos);
  return json({ fault: faultJson(r.fault), machineStatus: r.machineStatus, bumpedBookings: r.bumpedBookings, statusBefore: r.statusBefore, duplicate: r.duplicate }, r.duplicate ? 200 : 201);
});
