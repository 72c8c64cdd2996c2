import { describe, expect, it } from 'vitest';
import {
  CUT_MESSAGES, DENY_MESSAGES, DISPLAY_WIDTH, badgeHint, billableMinutes, decideState, normaliseBadge, stateDeadline, type StateFacts,
} from '../../src/lib/controller-rules';

const T = new Date('2026-12-03T01:00:00Z');
const at = (min: number) => new Date(T.getTime() + min * 60_000);

describe('controller rules', () => {
  it('every message fits one line of the display', () => {
    for (const m of [...Object.values(DENY_MESSAGES), ...Object.values(CUT_MESSAGES)]) expect(m.length, m).toBeLessThanOrEqual(DISPLAY_WIDTH);
  });

  it('measured beam seconds bill whole minutes, a started minute counted; without them the wall clock rounds', () => {
    expect(billableMinutes(T, at(30), 150)).toEqual({ minutes: 3, source: 'measured' });
    expect(billableMinutes(T, at(30), 0)).toEqual({ minutes: 0, source: 'measured' });
    expect(billableMinutes(T, at(30), 60)).toEqual({ minutes: 1, source: 'measured' });
    expect(billableMinutes(T, at(30), null)).toEqual({ minutes: 30, source: 'clock' });
    expect(billableMinutes(T, new Date(T.getTime() + 89_000), undefined)).toEqual({ minutes: 1, source: 'clock' });
  });

  it('badges are normalised (separators, case) and only the last four characters are shown', () => {
    expect(normaliseBadge(' 04:a2-19 7f ')).toBe('04A2197F');
    expect(badgeHint(normaliseBadge('04:A2:19:7F:33:80'))).toBe('3380');
  });

  it('the state: out of service and idle cut; a session enables until its end, cut after the grace', () => {
    const session = (over: Partial<NonNullable<StateFacts['session']>> = {}): StateFacts => ({
      machineOutOfService: false,
      session: { endsAt: at(60), personActive: true, clearance: { ok: true }, ...over },
    });
    expect(decideState({ machineOutOfService: false, session: null }, T)).toMatchObject({ state: 'cut', reason: 'idle' });
    expect(decideState({ ...session(), machineOutOfService: true }, T)).toMatchObject({ state: 'cut', reason: 'machine_out_of_service' });
    expect(decideState(session(), T)).toEqual({ state: 'enabled', until: at(60) });
    expect(decideState(session(), at(64))).toMatchObject({ state: 'enabled' });
    expect(decideState(session(), at(65), 5)).toMatchObject({ state: 'cut', reason: 'booking_ended' });
    expect(decideState(session({ clearance: { ok: false, state: 'suspended' } }), T)).toMatchObject({ state: 'cut', reason: 'suspended' });
    expect(decideState(session({ clearance: { ok: false, state: 'lapsed' } }), T)).toMatchObject({ state: 'cut', reason: 'not_cleared' });
    expect(decideState(session({ personActive: false }), T)).toMatchObject({ state: 'cut', reason: 'inactive' });
    expect(stateDeadline(session(), 5)).toEqual(at(65));
    expect(stateDeadline({ machineOutOfService: false, session: null })).toBeNull();
  });
});
