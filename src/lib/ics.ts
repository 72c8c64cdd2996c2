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
  /** RFC 5545 SEQUENCE: 0 for the first version of the event, higher for each later change of the same UID. */
  sequence?: number;
}

export interface IcsOptions {
  /** publish: a confirmation or a feed; request: an invitation; cancel: the event is withdrawn (RFC 5546 §3.2.5). */
  method?: 'publish' | 'request' | 'cancel';
  stamp?: Date;
  /** How often a subscribed calendar should fetch the document again, in seconds (REFRESH-INTERVAL, X-PUBLISHED-TTL). */
  refreshSeconds?: number;
}

export function buildIcs(name: string, events: IcsEvent[], opts: IcsOptions = {}): string {
  const cal = ical({ name, prodId: { company: 'Beamwarden', product: 'bookings', language: 'EN' } });
  if (opts.method === 'request') cal.method(ICalCalendarMethod.REQUEST);
  else if (opts.method === 'publish') cal.method(ICalCalendarMethod.PUBLISH);
  else if (opts.method === 'cancel') cal.method(ICalCalendarMethod.CANCEL);
  if (opts.refreshSeconds) cal.ttl(opts.refreshSeconds);
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
      // a CANCEL message withdraws the event whatever its own flag says
      status: e.cancelled || opts.method === 'cancel' ? ICalEventStatus.CANCELLED : ICalEventStatus.CONFIRMED,
      sequence: e.sequence ?? 0,
    });
  }
  return cal.toString();
}
