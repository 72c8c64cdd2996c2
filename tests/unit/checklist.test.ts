import { describe, expect, it } from 'vitest';
import {
  beamMinutes, checkCheckOut, checkInWindow, checkPreUse, coolantPolicy, DEFAULT_COOLANT_RANGE_C, PRE_USE_ITEMS,
} from '../../src/lib/checklist';

const all = Object.fromEntries(PRE_USE_ITEMS.map((i) => [i.key, true]));
const glass = coolantPolicy({ coolantType: 'water' });
const rf = coolantPolicy({ coolantType: 'air' });

describe('pre-use checklist', () => {
  it('passes with every item ticked and a coolant reading inside 15–25 °C (common practice for glass tubes, REFERENCE.md)', () => {
    expect(DEFAULT_COOLANT_RANGE_C).toEqual({ min: 15, max: 25 });
    const v = checkPreUse({ checklist: all, coolantC: 18.46 }, glass);
    expect(v).toEqual({ ok: true, checklist: all, coolantC: 18.5 });
  });

  it('refuses when any item is missing or not exactly true, naming each one', () => {
    const v = checkPreUse({ checklist: { ...all, lensClean: false, willStay: 'yes' }, coolantC: 18 }, glass);
    expect(v.ok).toBe(false);
    if (v.ok) return;
    expect(v.code).toBe('checklist_incomplete');
    expect(Object.keys(v.fields).sort()).toEqual(['checklist.lensClean', 'checklist.willStay']);
    expect(v.message).toMatch(/2 items/);
  });

  it('asks that coolant is flowing, not only its temperature (REFERENCE.md, common practice: flowing before the tube fires)', () => {
    expect(PRE_USE_ITEMS.map((i) => i.key)).toContain('coolantFlowing');
    const v = checkPreUse({ checklist: { ...all, coolantFlowing: false }, coolantC: 18 }, glass);
    expect(v).toMatchObject({ ok: false, code: 'checklist_incomplete', fields: { 'checklist.coolantFlowing': expect.stringMatching(/coolant is flowing/) } });
  });

  it('refuses a water-cooled machine without a reading', () => {
    const v = checkPreUse({ checklist: all }, glass);
    expect(v).toMatchObject({ ok: false, code: 'checklist_incomplete', fields: { coolantC: expect.any(String) } });
    expect(checkPreUse({ checklist: all, coolantC: Number.NaN }, glass)).toMatchObject({ ok: false, code: 'checklist_incomplete' });
  });

  it('refuses coolant outside the range with the reason (too cold: condensation; too hot: power loss, cracking)', () => {
    const cold = checkPreUse({ checklist: all, coolantC: 12 }, glass);
    expect(cold).toMatchObject({ ok: false, code: 'coolant_out_of_range' });
    if (!cold.ok) expect(cold.message).toMatch(/below 15 °C.*condensation/);
    const hot = checkPreUse({ checklist: all, coolantC: 27.5 }, glass);
    expect(hot).toMatchObject({ ok: false, code: 'coolant_out_of_range' });
    if (!hot.ok) expect(hot.message).toMatch(/27\.5 °C is above 25 °C/);
  });

  it('the range edges are inside; a machine may have its own range', () => {
    expect(checkPreUse({ checklist: all, coolantC: 15 }, glass).ok).toBe(true);
    expect(checkPreUse({ checklist: all, coolantC: 25 }, glass).ok).toBe(true);
    const own = coolantPolicy({ coolantType: 'water', coolantMinC: 16, coolantMaxC: 20 });
    expect(checkPreUse({ checklist: all, coolantC: 21 }, own)).toMatchObject({ ok: false, code: 'coolant_out_of_range' });
  });

  it('air-cooled RF tubes take no chiller reading (any value is ignored)', () => {
    expect(rf.needsReading).toBe(false);
    expect(checkPreUse({ checklist: all, coolantC: 99 }, rf)).toEqual({ ok: true, checklist: all, coolantC: null });
  });
});

describe('check-out and beam time', () => {
  it('needs "left clean and clear"', () => {
    expect(checkCheckOut({ leftCleanAndClear: true })).toEqual({ ok: true, checkout: { leftCleanAndClear: true } });
    expect(checkCheckOut({})).toMatchObject({ ok: false, code: 'checklist_incomplete', fields: { leftCleanAndClear: expect.any(String) } });
  });

  it('beam minutes are whole minutes from check-in to check-out, rounded to the nearest', () => {
    const t = new Date('2026-12-02T01:00:00Z');
    expect(beamMinutes(t, new Date('2026-12-02T01:42:20Z'))).toBe(42);
    expect(beamMinutes(t, new Date('2026-12-02T01:42:40Z'))).toBe(43);
    expect(beamMinutes(t, t)).toBe(0);
    expect(beamMinutes(t, new Date('2026-12-02T00:59:00Z'))).toBe(0);
  });
});

describe('check-in window', () => {
  const start = new Date('2026-12-02T02:00:00Z');
  const end = new Date('2026-12-02T03:00:00Z');
  it('opens 10 minutes before the start and closes at the end', () => {
    expect(checkInWindow(start, end, new Date('2026-12-02T01:49:59Z'))).toMatchObject({ ok: false, code: 'too_early' });
    expect(checkInWindow(start, end, new Date('2026-12-02T01:50:00Z'))).toEqual({ ok: true });
    expect(checkInWindow(start, end, new Date('2026-12-02T02:59:59Z'))).toEqual({ ok: true });
    expect(checkInWindow(start, end, end)).toMatchObject({ ok: false, code: 'booking_ended' });
  });
  it('says how long until it opens', () => {
    const v = checkInWindow(start, end, new Date('2026-12-02T01:30:00Z'));
    expect(v.ok ? '' : v.message).toMatch(/in 20 minutes/);
  });
});
