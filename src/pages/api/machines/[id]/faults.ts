import { HttpError, json, parseWith, requireSignedIn, route } from '../../../../lib/server/http';
import { MAX_PHOTOS, PHOTO_MAX_BYTES, type PhotoUpload } from '../../../../lib/server/faults/photos';
import { reportFault } from '../../../../lib/server/faults/reporting';
import { faultReportFields } from '../../../../lib/faults-shared';
import { faultJson } from '../../../../lib/server/fault-json';

/**
 * POST /api/machines/:idOrCode/faults (signed in; multipart/form-data: summary, details?, severity, clientId?, photos[] up to 3)
 * → 201 { fault, machineStatus, bumpedBookings, statusBefore, duplicate: false }. The same clientId (a UUID the phone
 * made) sent again by the same person → 200 with the fault already filed (duplicate: true): no second row, no e-mail. 413 for a photo over 8 MB, 415 for anything that is not an image by
 * its content, 422 too_many_photos for more than 3.
 */
export const POST = route(async ({ locals, params, request }) => {
  const person = requireSignedIn(locals);
  if (!/^multipart\/form-data\b/i.test(request.headers.get('content-type') ?? '')) {
    throw new HttpError(415, 'unsupported_media_type', 'Send the report as multipart/form-data.');
  }
  const declared = Number(request.headers.get('content-length') ?? '0');
  if (declared > (MAX_PHOTOS + 1) * PHOTO_MAX_BYTES) throw new HttpError(413, 'file_too_large', `Each photo may be at most ${PHOTO_MAX_BYTES / 1024 / 1024} MB.`);
  let form: FormData;
  try {
    form = await request.formData();
  } catch {
    throw new HttpError(400, 'bad_form', 'The form data could not be read.');
  }
  const input = parseWith(faultReportFields, {
    summary: form.get('summary') ?? undefined,
    details: form.get('details') ?? undefined,
    severity: form.get('severity') ?? undefined,
    clientId: form.get('clientId') || undefined,
  });
  const files = [...form.getAll('photos'), ...form.getAll('photos[]')].filter((f): f is File => f instanceof File && f.size > 0);
  if (files.length > MAX_PHOTOS) throw new HttpError(422, 'too_many_photos', `Attach at most ${MAX_PHOTOS} photos.`, { photos: `At most ${MAX_PHOTOS} photos.` });
  const photos: PhotoUpload[] = [];
  for (const f of files) {
    if (f.size > PHOTO_MAX_BYTES) throw new HttpError(413, 'file_too_large', `Each photo may be at most ${PHOTO_MAX_BYTES / 1024 / 1024} MB.`);
    photos.push({ bytes: new Uint8Array(await f.arrayBuffer()) });
  }
  const r = await reportFault(person, params.id ?? '', input, photos);
  return json({ fault: faultJson(r.fault), machineStatus: r.machineStatus, bumpedBookings: r.bumpedBookings, statusBefore: r.statusBefore, duplicate: r.duplicate }, r.duplicate ? 200 : 201);
});
