/**
 * iCalendar (RFC 5545) documents for bookings, built with ical-generator. Times are written as UTC
 * date-times (the "Z" form of RFC 5545 §3.3.5), so every calendar app places them right whatever its
 * own time zone. Pure: no I/O.
 */
import ical, { ICalCalendarMethod, ICalEventStatus } from 'ical-generator';

export interface IcsEvent {
  id: string;
  startsAt: Date;
  endsAt: Date;
  summary: string;
  description?: string;
  location?: string;
  cancelled?: boolean;
  url?: string;
}

export function buildIcs(name: string, events: IcsEvent[], opts: { method?: 'publish' | 'request'; stamp?: Date } = {}): string {
  const cal = ical({ name, prodId: { company: 'Beamwarden', product: 'bookings', language: 'EN' } });
  if (opts.method === 'request') cal.method(ICalCalendarMethod.REQUEST);
  else if (opts.method === 'publish') cal.method(ICalCalendarMethod.PUBLISH);
  for (const e of events) {
    cal.createEvent({
      id: `${e.id}@beamwarden`,
      start: e.startsAt,
      end: e.endsAt,
      stamp: opts.stamp ?? new Date(),
      summary: e.summary,
      description: e.description ?? null,
      location: e.location ?? null,
      url: e.url ?? null,
      status: e.cancelled ? ICalEventStatus.CANCELLED : ICalEventStatus.CONFIRMED,
    });
  }
  return cal.toString();
}
