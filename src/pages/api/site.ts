import { json, readJson, requireRole, route } from '@lib/server/http';
import { getSettings, updateSettings, type SiteSettings } from '@lib/server/settings';
import { siteSettingsInput, siteValues } from '@lib/site-settings';

function view(s: SiteSettings) {
  return {
    ...siteValues(s),
    updatedAt: s.updatedAt ? s.updatedAt.toISOString() : null,
  };
}

/** GET /api/site (admin) → the site settings. */
export const GET = route(async ({ locals }) => {
  requireRole(locals, 'admin');
  return json(view(await getSettings()));
});

/**
 * PUT /api/site {name, timeZone, locale?, currency, taxRatePercent, pricesIncludeTax, publicBaseUrl} (admin) →
 * the saved settings. Every field is required (publicBaseUrl may be null; locale left out keeps the site's); the change is audited as
 * `site.updated` with the values before and after.
 */
export const PUT = route(async ({ locals, request }) => {
  const admin = requireRole(locals, 'admin');
  const input = await readJson(request, siteSettingsInput);
  return json(view(await updateSettings(admin.id, input)));
});
