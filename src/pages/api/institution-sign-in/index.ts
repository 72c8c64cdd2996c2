import { json, readJson, requireRole, route } from '@lib/server/http';
import { institutionConnection, institutionSettings, updateInstitutionSettings } from '@lib/server/institution';
import { institutionSettingsInput } from '@lib/institution-sign-in';

function view(settings: Awaited<ReturnType<typeof institutionSettings>>) {
  const c = institutionConnection();
  return { configured: c !== null, issuer: c?.issuer ?? null, emailClaim: c?.emailClaim ?? null, domains: c?.domains ?? [], ...settings };
}

/** GET /api/institution-sign-in (admin) → the provider as configured by environment (no secret) and the admin's settings. */
export const GET = route(async ({ locals }) => {
  requireRole(locals, 'admin');
  return json(view(await institutionSettings()));
});

/** PUT /api/institution-sign-in (admin) {institutionName, tierClaim, tierMap, passwordSignInOff} → 200; audited. */
export const PUT = route(async ({ locals, request }) => {
  const admin = requireRole(locals, 'admin');
  const input = await readJson(request, institutionSettingsInput);
  return json(view(await updateInstitutionSettings(admin.id, input)));
});
