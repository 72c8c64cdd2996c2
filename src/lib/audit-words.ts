/**
 * Plain words for the Audit screen: what each event code and each field or checklist key means to a person.
 * The codes stay as they are in the API and the CSV; only the screen shows these words. Pure, no I/O.
 */
import { CHECK_OUT_ITEMS, PRE_USE_ITEMS } from './checklist';

export const AUDIT_KIND_WORDS: Readonly<Record<string, string>> = {
  'booking.bumped': 'Booking bumped (machine out of service)',
  'booking.cancelled': 'Booking cancelled',
  'booking.claimed': 'Freed time claimed from the waitlist',
  'booking.class_block_created': 'Class block booked',
  'booking.created': 'Booking made',
  'booking.no_show': 'Booking marked no-show',
  'calendar_feed.created': 'Calendar address created',
  'calendar_feed.revoked': 'Calendar address revoked',
  'card.saved': 'Card saved',
  'charge.failed': 'Payment failed',
  'charge.refunded': 'Charge refunded',
  'clearance.lapsed': 'Clearance lapsed',
  'clearance.quiz_passed': 'Quiz passed',
  'clearance.reinstated': 'Clearance reinstated',
  'clearance.signed_off': 'Signed off',
  'clearance.suspended': 'Clearance suspended',
  'closure.added': 'Closure added',
  'closure.removed': 'Closure removed',
  'fault.noted': 'Note added to a fault',
  'fault.reported': 'Fault reported',
  'fault.resolved': 'Fault resolved',
  'fault.triaged': 'Fault triaged',
  'machine.created': 'Machine added',
  'machine.retired': 'Machine retired',
  'machine.rules_changed': 'Booking rules changed',
  'machine.status_changed': 'Machine status changed',
  'machine.updated': 'Machine details changed',
  'machine_group.updated': 'Machine group changed',
  'material.created': 'Material added',
  'material.updated': 'Material rule changed',
  'material_request.created': 'New material requested',
  'material_request.approved': 'Material request approved',
  'material_request.rejected': 'Material request refused',
  'person.created': 'Person added',
  'person.deactivated': 'Person deactivated',
  'person.invitation_resent': 'New invitation sent',
  'person.reactivated': 'Person reactivated',
  'person.tier_changed': 'Tier changed',
  'price.version_created': 'New price version',
  'quiz.created': 'Quiz created',
  'quiz.draft_saved': 'Quiz draft saved',
  'quiz.published': 'Quiz published',
  'role.changed': 'Roles changed',
  'session.auto_closed': 'Session closed automatically',
  'session.checked_in': 'Checked in at the machine',
  'session.checked_out': 'Checked out',
  'session.reviewed': 'Auto-closed session reviewed',
  'site.updated': 'Site settings changed',
  'upkeep.interval_changed': 'Upkeep interval changed',
  'upkeep.logged': 'Upkeep logged',
  'waitlist.joined': 'Joined the waitlist',
};

/** Checklist items and fields that appear in the before/after of audit entries. */
export const AUDIT_FIELD_WORDS: Readonly<Record<string, string>> = {
  causeFixed: 'The cause of the fault is fixed or made safe',
  interlocksTested: 'Lid interlock and emergency stop tested',
  coolingAndExtraction: 'Cooling and extraction run normally',
  testFire: 'A low-power test job ran attended, without trouble',
  ...Object.fromEntries([...PRE_USE_ITEMS, ...CHECK_OUT_ITEMS].map((i) => [i.key, i.label])),
  lateCancel: 'Late cancellation',
  startsAt: 'Starts',
  endsAt: 'Ends',
  machineId: 'Machine',
  personId: 'Person',
  publicBaseUrl: 'Public address',
  timeZone: 'Time zone',
  taxRatePercent: 'Tax rate (%)',
  pricesIncludeTax: 'Prices include tax',
  coolantC: 'Coolant temperature (°C)',
  beamMinutes: 'Beam time (minutes)',
  jobTimerMinutes: 'Job timer (minutes)',
  closedBy: 'Closed because',
  closedFaults: 'Open faults closed',
};

/** "machine.status_changed" → "Machine status changed" (known codes), else the code made readable. */
export function auditKindWords(kind: string): string {
  const known = AUDIT_KIND_WORDS[kind];
  if (known) return known;
  const [area = '', what = ''] = kind.split('.');
  const text = `${area.replace(/_/g, ' ')}: ${what.replace(/_/g, ' ')}`.trim();
  return text.charAt(0).toUpperCase() + text.slice(1);
}

/** "causeFixed" → its checklist wording; other keys: "camelCase_key" → "Camel case key". */
export function auditFieldWords(key: string): string {
  const known = AUDIT_FIELD_WORDS[key];
  if (known) return known;
  const words = key.replace(/([a-z0-9])([A-Z])/g, '$1 $2').replace(/[_.]/g, ' ').toLowerCase().trim();
  return words.charAt(0).toUpperCase() + words.slice(1);
}

/** A before/after value as lines of "words: value" (nested objects flattened one level, true/false as yes/no). */
export function auditDetailLines(value: unknown): { label: string; value: string }[] {
  if (value === null || value === undefined) return [];
  if (typeof value !== 'object' || Array.isArray(value)) return [{ label: 'Value', value: plain(value) }];
  const out: { label: string; value: string }[] = [];
  for (const [k, v] of Object.entries(value as Record<string, unknown>)) {
    if (v && typeof v === 'object' && !Array.isArray(v)) {
      for (const [k2, v2] of Object.entries(v as Record<string, unknown>)) out.push({ label: auditFieldWords(k2), value: plain(v2) });
    } else out.push({ label: auditFieldWords(k), value: plain(v) });
  }
  return out;
}

function plain(v: unknown): string {
  if (v === true) return 'yes';
  if (v === false) return 'no';
  if (v === null || v === undefined) return '—';
  if (Array.isArray(v)) return v.length ? v.map((x) => (typeof x === 'object' ? JSON.stringify(x) : plain(x))).join(', ') : '—';
  if (typeof v === 'object') return JSON.stringify(v);
  return String(v);
}

const ISO_INSTANT = /\b\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(?::\d{2}(?:\.\d+)?)?(?:Z|[+-]\d{2}:\d{2})\b/g;

/** Instants written into summaries and values as ISO text ("2027-03-02T11:00:00.000Z"), shown in the site's date style. */
export function withSiteDates(text: string, format: (d: Date) => string): string {
  return text.replace(ISO_INSTANT, (iso) => {
    const d = new Date(iso);
    return Number.isNaN(d.getTime()) ? iso : format(d);
  });
}
