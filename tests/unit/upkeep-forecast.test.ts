import { describe, expect, it } from 'vitest';
import { beamHoursPerDay, byUrgency, defaultIntervals, forecast, tubeHours, tubeLifeUsed } from '../../src/lib/upkeep-forecast';
import { machinePageUrl, wrapText } from '../../src/lib/labels';

const DAY = 86_400_000;
const now = new Date('2026-12-02T00:00:00Z');
const daysAgo = (d: number) => new Date(now.getTime() - d * DAY);
const inDays = (d: number) => new Date(now.getTime() + d * DAY);

describe('rate of use and tube hours', () => {
  it('30 h of beam in 30 days is 1 h/day', () => {
    expect(beamHoursPerDay(30 * 60, 30)).toBe(1);
    expect(beamHoursPerDay(0)).toBe(0);
    expect(() => beamHoursPerDay(10, 0)).toThrow(RangeError);
  });
  it('tube hours from beam minutes, one decimal; share of rated life', () => {
    expect(tubeHours(90)).toBe(1.5);
    expect(tubeHours(1234)).toBe(20.6); // 1234 / 60 = 20.566…
    expect(tubeLifeUsed(500, 2000)).toBe(0.25);
  });
  it('default tube life sits in the common-practice ranges (REFERENCE.md, common practice: DC glass 1 000–10 000 h, RF metal 20 000–45 000 h)', () => {
    const glass = defaultIntervals('dc_glass', 'water').tube_replacement.beamHours!;
    const rf = defaultIntervals('rf_metal', 'air').tube_replacement.beamHours!;
    expect(glass).toBeGreaterThanOrEqual(1000);
    expect(glass).toBeLessThanOrEqual(10000);
    expect(rf).toBeGreaterThanOrEqual(20000);
    expect(rf).toBeLessThanOrEqual(45000);
  });
  it('lens cleaning is at least weekly (REFERENCE.md: typically weekly under heavy use); no coolant change without a chiller', () => {
    expect(defaultIntervals('dc_glass', 'water').lens_clean.days).toBeLessThanOrEqual(7);
    expect(defaultIntervals('rf_metal', 'air').coolant_change).toEqual({ beamHours: null, days: null });
  });
});

describe('forecast (worked examples)', () => {
  it('lens: 8 beam h or 7 days; cleaned 3 days ago, 5 h since, 1 h/day → beam limit first, due in 3 days (due soon)', () => {
    // beam: 8 − 5 = 3 h left at 1 h/day → now + 3 days; days: cleaned 3 days ago + 7 = now + 4 days
    const f = forecast({ interval: { beamHours: 8, days: 7 }, lastDoneAt: daysAgo(3), since: daysAgo(400), beamMinutesSince: 300, recentBeamMinutes: 1800, now });
    expect(f.dueAt).toEqual(inDays(3));
    expect(f.by).toBe('beam hours');
    expect(f.beamHoursLeft).toBe(3);
    expect(f.state).toBe('due soon');
  });

  it('same lens on a quiet machine (0.1 h/day) → the day limit decides: due in 4 days', () => {
    // beam: 3 h left at 0.1 h/day → 30 days; days → 4 days
    const f = forecast({ interval: { beamHours: 8, days: 7 }, lastDoneAt: daysAgo(3), since: daysAgo(400), beamMinutesSince: 300, recentBeamMinutes: 180, now });
    expect(f.dueAt).toEqual(inDays(4));
    expect(f.by).toBe('days');
  });

  it('tube: 2000 h rated, 1 850 h used, 2.5 h/day → 60 days left (ok)', () => {
    const f = forecast({ interval: { beamHours: 2000, days: null }, lastDoneAt: daysAgo(700), since: daysAgo(900), beamMinutesSince: 1850 * 60, recentBeamMinutes: 2.5 * 60 * 30, now });
    expect(f.dueAt).toEqual(inDays(60));
    expect(f.state).toBe('ok');
    expect(f.hoursPerDay).toBe(2.5);
  });

  it('overdue by beam hours, or by days; never logged counts from `since`', () => {
    expect(forecast({ interval: { beamHours: 8, days: 7 }, lastDoneAt: daysAgo(2), since: daysAgo(99), beamMinutesSince: 9 * 60, recentBeamMinutes: 0, now })).toMatchObject({ state: 'overdue', dueAt: now, beamHoursLeft: -1 });
    expect(forecast({ interval: { beamHours: null, days: 90 }, lastDoneAt: daysAgo(91), since: daysAgo(500), beamMinutesSince: 0, recentBeamMinutes: 0, now })).toMatchObject({ state: 'overdue', dueAt: daysAgo(1), by: 'days' });
    expect(forecast({ interval: { beamHours: null, days: 30 }, lastDoneAt: null, since: daysAgo(10), beamMinutesSince: 0, recentBeamMinutes: 0, now })).toMatchObject({ state: 'ok', dueAt: inDays(20) });
  });

  it('a beam-only interval on an idle machine has no date; an interval with neither limit is not planned', () => {
    expect(forecast({ interval: { beamHours: 100, days: null }, lastDoneAt: daysAgo(5), since: daysAgo(5), beamMinutesSince: 60, recentBeamMinutes: 0, now })).toMatchObject({ state: 'ok', dueAt: null, by: null, beamHoursLeft: 99 });
    expect(forecast({ interval: { beamHours: null, days: null }, lastDoneAt: null, since: daysAgo(5), beamMinutesSince: 0, recentBeamMinutes: 0, now }).state).toBe('not planned');
  });

  it('sorts overdue first, then by due date', () => {
    const mk = (state: 'overdue' | 'ok' | 'due soon', d: number | null) => ({ forecast: { state, dueAt: d === null ? null : inDays(d), by: null, beamHoursLeft: null, hoursPerDay: 0 } });
    const sorted = byUrgency([mk('ok', 40), mk('due soon', 2), mk('ok', null), mk('overdue', -3), mk('ok', 20)]);
    expect(sorted.map((x) => [x.forecast.state, x.forecast.dueAt?.getTime() ?? null])).toEqual([
      ['overdue', inDays(-3).getTime()], ['due soon', inDays(2).getTime()], ['ok', inDays(20).getTime()], ['ok', inDays(40).getTime()], ['ok', null],
    ]);
  });
});

describe('labels', () => {
  it('the label URL is <base>/m/<code> without a double slash', () => {
    expect(machinePageUrl('https://lasers.example.org/', 'laser-a')).toBe('https://lasers.example.org/m/laser-a');
  });
  it('wraps words to the width', () => {
    expect(wrapText('Never leave a running job; watch for flame.', 26)).toEqual(['Never leave a running job;', 'watch for flame.']);
  });
});
