/**
 * The pre-use checklist at check-in and the answers at check-out: pure validation, no I/O.
 * Coolant range: common practice for DC glass tubes is about 15–25 °C (REFERENCE.md); air-cooled RF tubes
 * have no chiller, so no reading is asked for.
 */

export const PRE_USE_ITEMS = [
  { key: 'extractionOn', label: 'Extraction is on and drawing air' },
  { key: 'airAssistOn', label: 'Air assist is on' },
  // REFERENCE.md (common practice): coolant must be flowing before a glass tube fires; a reading alone does not show it
  { key: 'coolantFlowing', label: 'Coolant is flowing through the tube (air-cooled machines: the cooling fans run)' },
  { key: 'lensClean', label: 'The lens looks clean (no smoke film, chips or cracks)' },
  { key: 'extinguisherInPlace', label: 'The fire extinguisher is in its place' },
  { key: 'willStay', label: 'I will not leave the machine while it runs' },
] as const;

export type PreUseKey = (typeof PRE_USE_ITEMS)[number]['key'];

export const CHECK_OUT_ITEMS = [{ key: 'leftCleanAndClear', label: 'The machine is left clean and clear (bed emptied, offcuts and scraps removed)' }] as const;
export type CheckOutKey = (typeof CHECK_OUT_ITEMS)[number]['key'];

/** Common practice for glass-tube chillers (REFERENCE.md: about 15–25 °C). */
export const DEFAULT_COOLANT_RANGE_C = { min: 15, max: 25 } as const;

export interface CoolantPolicy {
  /** False for air-cooled machines: there is no chiller to read. */
  needsReading: boolean;
  minC: number;
  maxC: number;
}

export function coolantPolicy(m: { coolantType: 'water' | 'air'; coolantMinC?: number | null; coolantMaxC?: number | null }): CoolantPolicy {
  return {
    needsReading: m.coolantType === 'water',
    minC: m.coolantMinC ?? DEFAULT_COOLANT_RANGE_C.min,
    maxC: m.coolantMaxC ?? DEFAULT_COOLANT_RANGE_C.max,
  };
}

export type Refusal = { ok: false; code: 'checklist_incomplete' | 'coolant_out_of_range'; message: string; fields: Record<string, string> };

export type PreUseVerdict = { ok: true; checklist: Record<PreUseKey, true>; coolantC: number | null } | Refusal;

/** Every item must be ticked (exactly `true`); the coolant reading, when needed, must be inside the machine's range. */
export function checkPreUse(input: { checklist: Record<string, unknown>; coolantC?: number | null }, policy: CoolantPolicy): PreUseVerdict {
  const fields: Record<string, string> = {};
  for (const item of PRE_USE_ITEMS) {
    if (input.checklist[item.key] !== true) fields[`checklist.${item.key}`] = `Confirm: ${item.label.toLowerCase()}.`;
  }
  if (Object.keys(fields).length) {
    const n = Object.keys(fields).length;
    return { ok: false, code: 'checklist_incomplete', message: `${n} item${n === 1 ? '' : 's'} of the pre-use checklist ${n === 1 ? 'is' : 'are'} not confirmed. Do not start until every item is true.`, fields };
  }
  let coolantC: number | null = null;
  if (policy.needsReading) {
    const c = input.coolantC;
    if (c === undefined || c === null || !Number.isFinite(c)) {
      return { ok: false, code: 'checklist_incomplete', message: 'Read the coolant temperature on the chiller and enter it.', fields: { coolantC: 'Enter the chiller reading in °C.' } };
    }
    if (c < policy.minC || c > policy.maxC) {
      const why = c < policy.minC
        ? `${fmt(c)} °C is below ${fmt(policy.minC)} °C: too cold risks condensation on the tube and optics. Let the chiller warm up, or tell a steward.`
        : `${fmt(c)} °C is above ${fmt(policy.maxC)} °C: a hot glass tube loses power and can crack. Wait for the chiller to cool it, or tell a steward.`;
      return { ok: false, code: 'coolant_out_of_range', message: `Coolant out of range (${fmt(policy.minC)}–${fmt(policy.maxC)} °C for this machine). ${why}`, fields: { coolantC: why } };
    }
    coolantC = Math.round(c * 10) / 10;
  }
  const checklist = Object.fromEntries(PRE_USE_ITEMS.map((i) => [i.key, true])) as Record<PreUseKey, true>;
  return { ok: true, checklist, coolantC };
}

export type CheckOutVerdict = { ok: true; checkout: Record<CheckOutKey, true> } | Refusal;

export function checkCheckOut(answers: Record<string, unknown>): CheckOutVerdict {
  const fields: Record<string, string> = {};
  for (const item of CHECK_OUT_ITEMS) {
    if (answers[item.key] !== true) fields[item.key] = `Confirm: ${item.label.toLowerCase()}.`;
  }
  if (Object.keys(fields).length) {
    return { ok: false, code: 'checklist_incomplete', message: 'Leave the machine clean and clear, then confirm it.', fields };
  }
  return { ok: true, checkout: Object.fromEntries(CHECK_OUT_ITEMS.map((i) => [i.key, true])) as Record<CheckOutKey, true> };
}

/** Beam minutes of a session: whole minutes from check-in to check-out, rounded to the nearest minute, never negative. */
export function beamMinutes(checkedInAt: Date, checkedOutAt: Date): number {
  return Math.max(0, Math.round((checkedOutAt.getTime() - checkedInAt.getTime()) / 60_000));
}

/** Check-in opens this many minutes before the booking's start. */
export const CHECK_IN_EARLY_MINUTES = 10;
/** An open session is closed by the worker this long after its booking's end, and flagged for a steward. */
export const AUTO_CLOSE_GRACE_MINUTES = 30;

export type WindowVerdict = { ok: true } | { ok: false; code: 'too_early' | 'booking_ended'; message: string };

/** The check-in window of a booking: from CHECK_IN_EARLY_MINUTES before its start until its end. */
export function checkInWindow(startsAt: Date, endsAt: Date, now: Date): WindowVerdict {
  const opens = startsAt.getTime() - CHECK_IN_EARLY_MINUTES * 60_000;
  if (now.getTime() < opens) {
    const mins = Math.ceil((opens - now.getTime()) / 60_000);
    return { ok: false, code: 'too_early', message: `Check-in opens ${CHECK_IN_EARLY_MINUTES} minutes before your booking starts — in ${mins} minute${mins === 1 ? '' : 's'}.` };
  }
  if (now.getTime() >= endsAt.getTime()) return { ok: false, code: 'booking_ended', message: 'This booking has ended; book again to use the machine.' };
  return { ok: true };
}

function fmt(n: number): string {
  return Number.isInteger(n) ? String(n) : n.toFixed(1);
}
