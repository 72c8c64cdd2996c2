/** Helpers for booking tests: known rules on the three lasers, and times on the site's wall clock. */
import { addDays, localToInstant, wallClock } from '../../src/lib/availability';
import { Client, body } from './client';

export const SITE_TZ = 'Pacific/Auckland';

export interface MachineRef {
  id: string;
  code: string;
  name: string;
}

export async function machines(c: Client): Promise<Record<'laser-a' | 'laser-b' | 'laser-c', MachineRef>> {
  const list = await body<MachineRef[]>(await c.get('/api/machines'));
  const find = (code: string) => {
    const m = list.find((x) => x.code === code);
    if (!m) throw new Error(`no ${code}`);
    return m;
  };
  return { 'laser-a': find('laser-a'), 'laser-b': find('laser-b'), 'laser-c': find('laser-c') };
}

/** Rules the booking tests rely on (set through the admin API, so each test file starts from them). */
export const TEST_RULES = {
  slotMinutes: 15,
  minMinutes: 30,
  maxMinutes: 180,
  bufferMinutes: 10,
  leadMinutes: 0,
  horizonDays: 35,
  cancelCutoffMinutes: 120,
  quotas: { student: 180, staff: 360, community: 240, commercial: 600 },
  hours: [1, 2, 3, 4, 5, 6, 7].map((weekday) => ({ weekday, opensMinute: 8 * 60, closesMinute: 22 * 60 })),
};

export async function setTestRules(admin: Client, machineId: string, over: Partial<typeof TEST_RULES> = {}): Promise<void> {
  const res = await admin.send('PUT', `/api/machines/${machineId}/rules`, { ...TEST_RULES, ...over });
  if (res.status !== 200) throw new Error(`setting rules failed: ${res.status} ${await res.text()}`);
}

/** The instant at hh:mm on the site's wall clock, `dayOffset` days after today (in the site's zone). */
export function siteTime(dayOffset: number, hour: number, minute = 0): Date {
  const w = wallClock(new Date(), SITE_TZ);
  const d = addDays(w.year, w.month, w.day, dayOffset);
  return localToInstant(d.year, d.month, d.day, hour * 60 + minute, SITE_TZ);
}

export function iso(d: Date): string {
  return d.toISOString();
}
