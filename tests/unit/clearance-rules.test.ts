/** The clearance state machine, lapse in the site's time zone, levels and the gate's decision. */
import { describe, expect, it } from 'vitest';
import {
  CLEARANCE_STATES, addDays, decideOperate, effectiveState, expiryFor, levelSatisfies, needsLapseWarning,
  nextStep, transition, type ClearanceEvent, type ClearanceState, type RefresherRule,
} from '../../src/lib/clearance-rules';
import { startOfZonedDay as startOfLocalDay, zonedDate as localDate } from '../../src/lib/time';

const events: ClearanceEvent[] = [
  { type: 'quiz_passed' },
  { type: 'signed_off', level: 'basic' },
  { type: 'expired' },
  { type: 'suspended' },
  { type: 'reinstated' },
];

/** Every (state, event, refresher) → expected target, or null for refused. Written out in full on purpose. */
function expected(from: ClearanceState, e: ClearanceEvent['type'], refresher: RefresherRule): ClearanceState | null {
  const table: Record<ClearanceState, Record<ClearanceEvent['type'], ClearanceState | null>> = {
    'quiz due': { quiz_passed: 'awaiting sign-off', signed_off: null, expired: null, suspended: 'suspended', reinstated: null },
    'awaiting sign-off': { quiz_passed: null, signed_off: 'cleared', expired: null, suspended: 'suspended', reinstated: null },
    cleared: { quiz_passed: null, signed_off: null, expired: 'lapsed', suspended: 'suspended', reinstated: null },
    lapsed: { quiz_passed: refresher === 'quiz' ? 'cleared' : 'awaiting sign-off', signed_off: null, expired: null, suspended: 'suspended', reinstated: null },
    suspended: { quiz_passed: null, signed_off: null, expired: null, suspended: null, reinstated: 'quiz due' },
  };
  return table[from][e];
}

describe('transition: every state × event × refresher rule', () => {
  for (const refresher of ['quiz', 'quiz_and_signoff'] as const) {
    for (const from of CLEARANCE_STATES) {
      for (const e of events) {
        const want = expected(from, e.type, refresher);
        it(`${from} + ${e.type} (${refresher}) → ${want ?? 'refused'}`, () => {
          const r = transition(from, e, { refresher });
          if (want === null) {
            expect(r.ok).toBe(false);
            if (!r.ok) expect(r.reason.length).toBeGreaterThan(10);
          } else {
            expect(r).toEqual({ ok: true, to: want });
          }
        });
      }
    }
  }

  it('reinstating returns to the state held before the suspension', () => {
    for (const back of ['quiz due', 'awaiting sign-off', 'cleared', 'lapsed'] as const) {
      expect(transition('suspended', { type: 'reinstated' }, { refresher: 'quiz', suspendedFrom: back })).toEqual({ ok: true, to: back });
    }
  });

  it('reinstating a cleared clearance whose expiry passed meanwhile gives lapsed', () => {
    expect(transition('suspended', { type: 'reinstated' }, { refresher: 'quiz', suspendedFrom: 'cleared', expired: true })).toEqual({ ok: true, to: 'lapsed' });
  });

  it('a cleared person may be signed off again only at a higher level', () => {
    expect(transition('cleared', { type: 'signed_off', level: 'advanced', heldLevel: 'basic' }, { refresher: 'quiz' })).toEqual({ ok: true, to: 'cleared' });
    expect(transition('cleared', { type: 'signed_off', level: 'basic', heldLevel: 'basic' }, { refresher: 'quiz' }).ok).toBe(false);
    expect(transition('cleared', { type: 'signed_off', level: 'basic', heldLevel: 'advanced' }, { refresher: 'quiz' }).ok).toBe(false);
  });
});

describe('levels', () => {
  it('advanced covers basic, not the other way', () => {
    expect(levelSatisfies('basic', 'basic')).toBe(true);
    expect(levelSatisfies('advanced', 'basic')).toBe(true);
    expect(levelSatisfies('advanced', 'advanced')).toBe(true);
    expect(levelSatisfies('basic', 'advanced')).toBe(false);
  });
});

describe('lapse in the site time zone', () => {
  const NZ = 'Pacific/Auckland';

  it('finds the start of a local day in summer (NZDT, UTC+13) and winter (NZST, UTC+12)', () => {
    // from memory: New Zealand keeps UTC+13 in December and UTC+12 in July
    expect(startOfLocalDay('2026-12-25', NZ).toISOString()).toBe('2026-12-24T11:00:00.000Z');
    expect(startOfLocalDay('2026-07-01', NZ).toISOString()).toBe('2026-06-30T12:00:00.000Z');
    expect(startOfLocalDay('2026-03-10', 'UTC').toISOString()).toBe('2026-03-10T00:00:00.000Z');
  });

  it('handles the days of a daylight-saving change', () => {
    // NZ clocks go back on 5 April 2026 (03:00 → 02:00) and forward on 27 September 2026 (02:00 → 03:00): from memory
    expect(startOfLocalDay('2026-04-05', NZ).toISOString()).toBe('2026-04-04T11:00:00.000Z');
    expect(startOfLocalDay('2026-04-06', NZ).toISOString()).toBe('2026-04-05T12:00:00.000Z');
    expect(startOfLocalDay('2026-09-27', NZ).toISOString()).toBe('2026-09-26T12:00:00.000Z');
    expect(startOfLocalDay('2026-09-28', NZ).toISOString()).toBe('2026-09-27T11:00:00.000Z');
  });

  it('a clearance given on a local day is valid through that date plus the validity and lapses at the next local midnight', () => {
    // 2026-12-02 09:30 in Auckland = 2026-12-01T20:30Z; the local date is 2 December
    const cleared = new Date('2026-12-01T20:30:00Z');
    expect(localDate(cleared, NZ)).toBe('2026-12-02');
    const exp = expiryFor(cleared, 365, NZ);
    // valid through 2 December 2027; lapses at 00:00 on 3 December 2027 NZDT = 2 December 11:00Z
    expect(exp.toISOString()).toBe('2027-12-02T11:00:00.000Z');
    expect(localDate(exp, NZ)).toBe('2027-12-03');
    expect(localDate(new Date(exp.getTime() - 1), NZ)).toBe('2027-12-02');
  });

  it('uses the local date, not the UTC date, near midnight', () => {
    // 23:30 UTC on 1 June is 11:30 on 2 June in Auckland
    expect(expiryFor(new Date('2026-06-01T23:30:00Z'), 1, NZ).toISOString()).toBe(startOfLocalDay('2026-06-04', NZ).toISOString());
    expect(expiryFor(new Date('2026-06-01T23:30:00Z'), 1, 'UTC').toISOString()).toBe('2026-06-03T00:00:00.000Z');
  });

  it('addDays crosses months and years', () => {
    expect(addDays('2026-12-31', 1)).toBe('2027-01-01');
    expect(addDays('2028-02-28', 1)).toBe('2028-02-29');
  });

  it('effectiveState turns cleared into lapsed exactly at the expiry instant', () => {
    const exp = new Date('2027-12-02T11:00:00Z');
    expect(effectiveState('cleared', exp, new Date(exp.getTime() - 1))).toBe('cleared');
    expect(effectiveState('cleared', exp, exp)).toBe('lapsed');
    expect(effectiveState('suspended', exp, new Date(exp.getTime() + 1))).toBe('suspended');
    expect(effectiveState('awaiting sign-off', null, exp)).toBe('awaiting sign-off');
  });

  it('warns once per expiry, inside 14 days, before the lapse', () => {
    const exp = new Date('2027-01-20T11:00:00Z');
    const day = 86_400_000;
    expect(needsLapseWarning('cleared', exp, null, new Date(exp.getTime() - 15 * day))).toBe(false);
    expect(needsLapseWarning('cleared', exp, null, new Date(exp.getTime() - 14 * day))).toBe(true);
    expect(needsLapseWarning('cleared', exp, exp, new Date(exp.getTime() - 3 * day))).toBe(false);
    expect(needsLapseWarning('cleared', exp, new Date(exp.getTime() - 365 * day), new Date(exp.getTime() - 3 * day))).toBe(true);
    expect(needsLapseWarning('cleared', exp, null, exp)).toBe(false);
    expect(needsLapseWarning('suspended', exp, null, new Date(exp.getTime() - day))).toBe(false);
  });
});

describe('the gate and the next step', () => {
  const machine = { requiredLevel: 'basic' as const, groupName: 'Glass-tube lasers', refresher: 'quiz' as const };
  const at = new Date('2026-12-02T00:00:00Z');
  const later = new Date('2027-12-02T00:00:00Z');

  it('refuses a person without a clearance and tells them to take the quiz, then book a sign-off', () => {
    const v = decideOperate(null, machine, at);
    expect(v).toEqual({ ok: false, state: 'none', message: 'Take the glass-tube lasers quiz on the Clearances screen, then book a practical sign-off with an instructor.' });
  });

  it('allows a current clearance and refuses it from its expiry on', () => {
    const c = { state: 'cleared' as const, level: 'basic' as const, expiresAt: later };
    expect(decideOperate(c, machine, at)).toEqual({ ok: true });
    const v = decideOperate(c, machine, later);
    expect(v.ok).toBe(false);
    if (!v.ok) {
      expect(v.state).toBe('lapsed');
      expect(v.message).toContain('refresher quiz');
    }
  });

  it('refuses suspended, awaiting sign-off and quiz due with their own next steps', () => {
    for (const state of ['suspended', 'awaiting sign-off', 'quiz due'] as const) {
      const v = decideOperate({ state, level: 'basic', expiresAt: later }, machine, at);
      expect(v).toEqual({ ok: false, state, message: nextStep(state, machine) });
    }
  });

  it('refuses a basic clearance on a machine that needs advanced', () => {
    const v = decideOperate({ state: 'cleared', level: 'basic', expiresAt: later }, { ...machine, requiredLevel: 'advanced' }, at);
    expect(v.ok).toBe(false);
    if (!v.ok) expect(v.message).toMatch(/needs an advanced/);
    expect(decideOperate({ state: 'cleared', level: 'advanced', expiresAt: later }, { ...machine, requiredLevel: 'advanced' }, at)).toEqual({ ok: true });
  });

  it('the lapsed next step names a new sign-off only when the group asks for it', () => {
    expect(nextStep('lapsed', { groupName: 'RF laser', refresher: 'quiz_and_signoff' })).toMatch(/new practical sign-off/);
    expect(nextStep('lapsed', { groupName: 'RF laser', refresher: 'quiz' })).not.toMatch(/sign-off/);
    expect(nextStep('quiz due', { groupName: 'RF laser', refresher: 'quiz', hasQuiz: false })).toMatch(/No rf laser quiz is published/);
  });
});
