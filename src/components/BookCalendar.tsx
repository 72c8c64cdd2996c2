/**
 * The Book screen: a FullCalendar time grid per machine (one machine, or all side by side), week and
 * day views, data from the API through react-query. Drag across free time to book; the booking shows at
 * once and is taken back if the server refuses it (with the reason). A form does the same by keyboard.
 *
 * Every answer of the server appears next to the control that caused it (the form's Book button, the
 * booking's dialog, or the calendar), in a live region, and takes the focus so the person sees it.
 *
 * Times: the calendar runs in UTC holding the site's wall-clock times ("shifted" instants), so the grid
 * always shows the site's hours whatever the browser's zone; conversions use the pure availability module.
 * Dates, times and amounts are written in the site locale (a prop from the server), never the browser's.
 */
import { lazy, Suspense, useEffect, useId, useMemo, useRef, useState } from 'react';
import { declared, MATERIALS_HINT, newRow, type MaterialRow } from './booking-material-rows';
import { QueryClient, QueryClientProvider, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import FullCalendar from '@fullcalendar/react';
import timeGridPlugin from '@fullcalendar/timegrid';
import interactionPlugin from '@fullcalendar/interaction';
import type { DateSelectArg, EventClickArg, EventInput } from '@fullcalendar/core';
import { addDays, isLateCancel, localToInstant, wallClock, zoneOffsetMinutes } from '@lib/availability';
import { formatMinutes, siteFormat, type SiteFormat } from '@lib/format';
import { api, ApiError } from './ui/api';
import type { CancelTerms, Feed as ServerFeed, FeedEvent } from '@lib/booking-feed';
import type { Json } from '@lib/json';

/** The materials picker and the material rules come in their own file, fetched as soon as the form first shows. */
const BookingMaterials = lazy(() => import('./BookingMaterials'));

/** What the materials picker shows while its code loads: its frame and first words, without the rows. */
function MaterialsLoading() {
  return (
    <fieldset className="min-w-0 space-y-3 rounded-lg border border-line p-3" aria-label="Materials" aria-busy="true">
      <legend className="px-1 font-semibold">Materials</legend>
      <p className="hint">{MATERIALS_HINT}</p>
    </fieldset>
  );
}

interface MachineInfo {
  id: string;
  name: string;
  status: string;
}
/** A booking in the feed as the island holds it; `pending` marks one shown before the server has answered. */
type FeedBooking = Json<FeedEvent> & { pending?: boolean };
type FeedMachine = Json<ServerFeed>['machines'][number];
type Feed = Omit<Json<ServerFeed>, 'bookings'> & { bookings: FeedBooking[] };

export interface BookProps {
  machines: MachineInfo[];
  timeZone: string;
  /** The site locale (BCP 47), from the server's site settings. */
  locale: string;
  isInstructor: boolean;
  initialMachine?: string;
  /** True when the person may book no machine at all: the page says why, and the form is not shown. */
  hideForm?: boolean;
}

type View = 'timeGridWeek' | 'timeGridDay';
type LocalDate = { year: number; month: number; day: number };
type Tone = 'ok' | 'stop' | 'warn' | 'info';
interface Message {
  tone: Tone;
  text: string;
  waitlist?: { machineId: string; startsAt: string; endsAt: string };
  /** a new object each time, so the same words said twice still move the focus */
  at: number;
}

const pad = (n: number) => String(n).padStart(2, '0');
const dateKey = (d: LocalDate) => `${d.year}-${pad(d.month)}-${pad(d.day)}`;
const parseKey = (s: string): LocalDate | null => {
  const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(s);
  return m ? { year: Number(m[1]), month: Number(m[2]), day: Number(m[3]) } : null;
};

export default function BookCalendar(props: BookProps) {
  const [client] = useState(() => new QueryClient({ defaultOptions: { queries: { staleTime: 15_000, refetchOnWindowFocus: true } } }));
  return (
    <QueryClientProvider client={client}>
      <Book {...props} />
    </QueryClientProvider>
  );
}

/**
 * A server's answer where the person is looking: a live region that is always in the page (so screen readers
 * announce what appears in it), whose message takes the focus and is scrolled into view when it appears.
 */
function Answer(p: { message: Message | null; children?: React.ReactNode; label: string }) {
  const ref = useRef<HTMLDivElement>(null);
  useEffect(() => {
    if (!p.message || !ref.current) return;
    ref.current.focus({ preventScroll: true });
    ref.current.scrollIntoView({ block: 'center', behavior: 'instant' as ScrollBehavior });
  }, [p.message]);
  const m = p.message;
  return (
    <div role={m?.tone === 'stop' ? 'alert' : 'status'} aria-live={m?.tone === 'stop' ? 'assertive' : 'polite'} aria-atomic="true">
      {m && (
        <div ref={ref} tabIndex={-1} className={`notice notice-${m.tone} flex flex-wrap items-center gap-3`} data-answer={p.label}>
          <span>{m.text}</span>
          {p.children}
        </div>
      )}
    </div>
  );
}

function Book({ machines, timeZone: tz, locale, isInstructor, initialMachine, hideForm }: BookProps) {
  const qc = useQueryClient();
  const fmt = useMemo(() => siteFormat(locale, tz), [locale, tz]);
  const today = useMemo(() => {
    const w = wallClock(new Date(), tz);
    return { year: w.year, month: w.month, day: w.day };
  }, [tz]);
  const bookable = machines.filter((m) => m.status !== 'out of service');
  const firstChoice = initialMachine && machines.some((m) => m.id === initialMachine) ? initialMachine : (bookable[0] ?? machines[0])?.id;
  const [machineSel, setMachineSel] = useState<string>(firstChoice ?? 'all');
  const [view, setView] = useState<View>('timeGridWeek');
  const [date, setDate] = useState<LocalDate>(today);
  /** the answer shown by the calendar (a drag on a machine out of service) */
  const [calendarMessage, setCalendarMessage] = useState<Message | null>(null);
  /** the answer shown by the form's Book button */
  const [formMessage, setFormMessage] = useState<Message | null>(null);
  const [draft, setDraft] = useState<{ machineId: string; date: string; start: string; end: string } | null>(null);
  const [selected, setSelected] = useState<FeedBooking | null>(null);
  // the form's machine and date: the machine follows the calendar's, the date stays inside the calendar's days
  const [formMachine, setFormMachine] = useState<string>(firstChoice && firstChoice !== 'all' ? firstChoice : bookable[0]?.id ?? '');
  const [formDate, setFormDate] = useState<string>(dateKey(today));

  useEffect(() => {
    if (window.matchMedia('(max-width: 640px)').matches) setView('timeGridDay');
  }, []);

  // the visible range, in real instants
  const range = useMemo(() => {
    const js = new Date(Date.UTC(date.year, date.month - 1, date.day)).getUTCDay();
    const first = view === 'timeGridWeek' ? addDays(date.year, date.month, date.day, -((js + 6) % 7)) : date;
    const days = view === 'timeGridWeek' ? 7 : 1;
    const last = addDays(first.year, first.month, first.day, days);
    return { first, days, from: localToInstant(first.year, first.month, first.day, 0, tz), to: localToInstant(last.year, last.month, last.day, 0, tz) };
  }, [date, view, tz]);

  // the calendar moved: keep the form's date on one of the days shown (today if shown, else the first day)
  useEffect(() => {
    const shown: string[] = [];
    for (let i = 0; i < range.days; i++) shown.push(dateKey(addDays(range.first.year, range.first.month, range.first.day, i)));
    setFormDate((d) => (shown.includes(d) ? d : shown.includes(dateKey(today)) ? dateKey(today) : date && shown.includes(dateKey(date)) ? dateKey(date) : shown[0]!));
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [range.first.year, range.first.month, range.first.day, range.days]);

  function chooseMachine(id: string) {
    setMachineSel(id);
    if (id !== 'all') setFormMachine(id);
  }

  function chooseFormMachine(id: string) {
    setFormMachine(id);
    if (machineSel !== 'all') setMachineSel(id);
  }

  function chooseFormDate(key: string) {
    setFormDate(key);
    const d = parseKey(key);
    if (d) setDate(d); // the calendar shows the week (or day) of the date typed in the form
  }

  const feedKey = ['feed', machineSel, range.from.toISOString(), range.to.toISOString()] as const;
  const feed = useQuery({
    queryKey: feedKey,
    queryFn: () => {
      const p = new URLSearchParams({ from: range.from.toISOString(), to: range.to.toISOString() });
      if (machineSel !== 'all') p.set('machineId', machineSel);
      return api<Feed>(`/api/bookings?${p}`);
    },
  });

  const create = useMutation({
    mutationFn: (v: { machineId: string; startsAt: Date; endsAt: Date; notes: string; materials: ReturnType<typeof declared>; classBlock?: { courseName: string; studentEmails: string[] } }) =>
      v.classBlock
        ? api<FeedBooking>('/api/class-blocks', { method: 'POST', json: { machineId: v.machineId, startsAt: v.startsAt.toISOString(), endsAt: v.endsAt.toISOString(), notes: v.notes, ...v.classBlock } })
        : api<FeedBooking & { paymentNotice?: string | null }>('/api/bookings', { method: 'POST', json: { machineId: v.machineId, startsAt: v.startsAt.toISOString(), endsAt: v.endsAt.toISOString(), materials: v.materials, notes: v.notes } }),
    onMutate: async (v) => {
      setFormMessage(null);
      await qc.cancelQueries({ queryKey: feedKey });
      const before = qc.getQueryData<Feed>(feedKey);
      if (before) {
        const optimistic: FeedBooking = {
          id: `pending-${Date.now()}`,
          machineId: v.machineId,
          startsAt: v.startsAt.toISOString(),
          endsAt: v.endsAt.toISOString(),
          occupiedUntil: v.endsAt.toISOString(),
          state: 'reserved',
          kind: v.classBlock ? 'class' : 'personal',
          mine: true,
          personName: null,
          courseName: v.classBlock?.courseName ?? null,
          notes: v.notes,
          lateCancel: false,
          pending: true,
        };
        qc.setQueryData<Feed>(feedKey, { ...before, bookings: [...before.bookings, optimistic] });
      }
      return { before };
    },
    onError: (err, v, ctx) => {
      if (ctx?.before) qc.setQueryData(feedKey, ctx.before);
      const text = err instanceof ApiError ? err.message : 'The booking was not saved. Check your connection and try again.';
      const canWait = err instanceof ApiError && err.code === 'slot_taken' && !v.classBlock;
      setFormMessage({ tone: 'stop', text: `Not booked: ${text}`, at: Date.now(), ...(canWait ? { waitlist: { machineId: v.machineId, startsAt: v.startsAt.toISOString(), endsAt: v.endsAt.toISOString() } } : {}) });
    },
    onSuccess: (b) => {
      setDraft(null);
      const notice = (b as { paymentNotice?: string | null }).paymentNotice;
      // no card saved (or no hold placed) is not a problem with the booking: said plainly, in the neutral style
      setFormMessage({ tone: notice ? 'info' : 'ok', at: Date.now(), text: `Booked: ${machineName(b.machineId)}, ${formatRange(new Date(b.startsAt), new Date(b.endsAt), fmt)}. A confirmation with a calendar file is on its way by e-mail.${notice ? ` ${notice}` : ''}` });
    },
    onSettled: () => qc.invalidateQueries({ queryKey: ['feed'] }),
  });

  const waitlist = useMutation({
    mutationFn: (w: { machineId: string; startsAt: string; endsAt: string }) => api('/api/waitlist', { method: 'POST', json: w }),
    onSuccess: () => setFormMessage({ tone: 'ok', at: Date.now(), text: 'You are on the waitlist. If that time frees up you will get an e-mail with a link that holds it for you for 15 minutes.' }),
    onError: (err) => setFormMessage({ tone: 'stop', at: Date.now(), text: err instanceof ApiError ? err.message : 'Could not join the waitlist.' }),
  });

  function machineName(id: string) {
    return machines.find((m) => m.id === id)?.name ?? 'Machine';
  }

  const shown = machineSel === 'all' ? machines : machines.filter((m) => m.id === machineSel);

  function step(n: number) {
    setDate((d) => addDays(d.year, d.month, d.day, n * (view === 'timeGridWeek' ? 7 : 1)));
  }

  function onSelect(machineId: string, arg: DateSelectArg) {
    const s = fromShifted(arg.start);
    const e = fromShifted(arg.end);
    arg.view.calendar.unselect();
    const machine = machines.find((m) => m.id === machineId);
    if (machine?.status === 'out of service') {
      setCalendarMessage({ tone: 'stop', at: Date.now(), text: `${machine.name} is out of service and takes no bookings.` });
      return;
    }
    setCalendarMessage(null);
    setSelected(null);
    setFormMachine(machineId);
    setFormDate(dateKey(s.date));
    setDraft({ machineId, date: dateKey(s.date), start: s.clock, end: e.clock === '00:00' ? '24:00' : e.clock });
  }

  function fromShifted(d: Date) {
    const date = { year: d.getUTCFullYear(), month: d.getUTCMonth() + 1, day: d.getUTCDate() };
    return { date, clock: `${pad(d.getUTCHours())}:${pad(d.getUTCMinutes())}` };
  }

  const data = feed.data;
  const rangeLabel =
    view === 'timeGridWeek'
      ? `Week of ${fmt.date(range.from)}`
      : fmt.longDate(range.from);

  return (
    <div className="space-y-4">
      <div className="flex flex-wrap items-end gap-3">
        <label className="field">
          <span>Machine</span>
          <select className="input" value={machineSel} onChange={(e) => chooseMachine(e.target.value)} aria-label="Machine">
            {machines.map((m) => (
              <option key={m.id} value={m.id}>{m.name}{m.status === 'out of service' ? ' (out of service)' : ''}</option>
            ))}
            <option value="all">All machines side by side</option>
          </select>
        </label>
        <div role="group" aria-label="View" className="flex gap-1">
          <button type="button" className={`btn ${view === 'timeGridWeek' ? 'btn-primary' : 'btn-quiet'}`} aria-pressed={view === 'timeGridWeek'} onClick={() => setView('timeGridWeek')}>Week</button>
          <button type="button" className={`btn ${view === 'timeGridDay' ? 'btn-primary' : 'btn-quiet'}`} aria-pressed={view === 'timeGridDay'} onClick={() => setView('timeGridDay')}>Day</button>
        </div>
        <div role="group" aria-label="Move" className="flex gap-1">
          <button type="button" className="btn btn-quiet" onClick={() => step(-1)} aria-label={view === 'timeGridWeek' ? 'Previous week' : 'Previous day'}>‹</button>
          <button type="button" className="btn btn-quiet" onClick={() => setDate(today)}>Today</button>
          <button type="button" className="btn btn-quiet" onClick={() => step(1)} aria-label={view === 'timeGridWeek' ? 'Next week' : 'Next day'}>›</button>
        </div>
        <label className="field">
          <span>Go to date</span>
          <input
            className="input"
            type="date"
            value={dateKey(date)}
            onChange={(e) => {
              const d = parseKey(e.target.value);
              if (d) setDate(d);
            }}
          />
        </label>
      </div>

      <h2 className="text-lg" aria-live="polite">{rangeLabel} <span className="hint">· times in {tz}</span></h2>
      <Legend />

      <Answer message={calendarMessage} label="calendar" />
      {feed.isError && <p className="notice notice-stop">Could not load the calendar: {(feed.error as Error).message}</p>}

      <div className={shown.length > 1 ? 'grid gap-3 lg:grid-cols-3' : ''}>
        {shown.map((m) => {
          const fm = data?.machines.find((x) => x.id === m.id);
          return (
            <section key={m.id} className="card p-2 sm:p-3" aria-label={`Calendar of ${m.name}`} data-machine-calendar={m.name}>
              <div className="mb-2 flex flex-wrap items-center justify-between gap-2 px-1">
                <h3 className="text-base font-semibold">{m.name}</h3>
                {m.status === 'out of service' ? (
                  <span className="status status-stop"><span aria-hidden="true">■</span>Out of service — no bookings</span>
                ) : fm ? (
                  <span className="hint">{fm.slotMinutes}-min grid · {fm.minMinutes}–{fm.maxMinutes} min · {fm.bufferMinutes} min cool-down</span>
                ) : null}
              </div>
              <MachineCalendar
                machine={m}
                feed={data}
                view={view}
                first={range.first}
                from={range.from}
                to={range.to}
                tz={tz}
                fmt={fmt}
                compact={shown.length > 1}
                onSelect={(arg) => onSelect(m.id, arg)}
                onPick={(b) => setSelected(b)}
              />
            </section>
          );
        })}
      </div>

      {selected && (
        <BookingDialog
          key={selected.id}
          booking={selected}
          machineName={machineName(selected.machineId)}
          tz={tz}
          fmt={fmt}
          cutoff={data?.machines.find((m) => m.id === selected.machineId)?.cancelCutoffMinutes ?? 0}
          onDone={() => qc.invalidateQueries({ queryKey: ['feed'] })}
          onClose={() => setSelected(null)}
        />
      )}

      {!hideForm && <BookingForm
        machines={machines}
        tz={tz}
        fmt={fmt}
        draft={draft}
        machineId={formMachine}
        onMachine={chooseFormMachine}
        date={formDate}
        onDate={chooseFormDate}
        feedMachine={data?.machines.find((m) => m.id === formMachine)}
        isInstructor={isInstructor}
        busy={create.isPending}
        onSubmit={(v) => create.mutate(v)}
        onClear={() => setDraft(null)}
      >
        <Answer message={formMessage} label="form">
          {formMessage?.waitlist && (
            <button type="button" className="btn btn-quiet" onClick={() => waitlist.mutate(formMessage.waitlist!)} disabled={waitlist.isPending}>
              Tell me if it frees up
            </button>
          )}
        </Answer>
      </BookingForm>}
    </div>
  );
}

function Legend() {
  return (
    <ul className="flex flex-wrap gap-x-4 gap-y-1 text-sm" aria-label="Legend">
      <li className="flex items-center gap-1.5"><span className="inline-block h-3 w-5 rounded-sm bg-ember" aria-hidden="true" />Your booking</li>
      <li className="flex items-center gap-1.5"><span className="inline-block h-3 w-5 rounded-sm bg-charcoal-soft" aria-hidden="true" />Booked (busy)</li>
      <li className="flex items-center gap-1.5"><span className="inline-block h-3 w-5 rounded-sm bw-legend-class" aria-hidden="true" />Class block</li>
      <li className="flex items-center gap-1.5"><span className="inline-block h-3 w-5 rounded-sm bw-legend-closed" aria-hidden="true" />Closed</li>
      <li className="flex items-center gap-1.5"><span className="inline-block h-3 w-5 rounded-sm bw-legend-cool" aria-hidden="true" />Cool-down</li>
    </ul>
  );
}

function MachineCalendar(p: {
  machine: MachineInfo;
  feed: Feed | undefined;
  view: View;
  first: LocalDate;
  from: Date;
  to: Date;
  tz: string;
  fmt: SiteFormat;
  compact: boolean;
  onSelect: (arg: DateSelectArg) => void;
  onPick: (b: FeedBooking) => void;
}) {
  const ref = useRef<FullCalendar>(null);
  // the grid holds the site's wall-clock times as UTC instants: write them in the site locale, read in UTC
  const wall = useMemo(() => siteFormat(p.fmt.locale, 'UTC'), [p.fmt.locale]);
  const shift = (iso: string | Date) => {
    const d = typeof iso === 'string' ? new Date(iso) : iso;
    return new Date(d.getTime() + zoneOffsetMinutes(d, p.tz) * 60_000);
  };

  useEffect(() => {
    const api = ref.current?.getApi();
    if (!api) return;
    api.changeView(p.view, dateKey(p.first));
  }, [p.view, p.first]);

  const events = useMemo<EventInput[]>(() => {
    if (!p.feed) return [];
    const out: EventInput[] = [];
    const fm = p.feed.machines.find((m) => m.id === p.machine.id);
    // closed time: the complement of the open ranges, shaded
    if (fm) {
      let cursor = p.from;
      const open = [...fm.open].sort((a, b) => a.start.localeCompare(b.start));
      for (const o of open) {
        const s = new Date(o.start);
        if (s > cursor) out.push({ start: shift(cursor), end: shift(s), display: 'background', classNames: ['bw-closed'] });
        cursor = new Date(o.end);
      }
      if (cursor < p.to) out.push({ start: shift(cursor), end: shift(p.to), display: 'background', classNames: ['bw-closed'] });
    }
    // time already past cannot be booked
    const now = new Date();
    if (now > p.from) out.push({ start: shift(p.from), end: shift(now < p.to ? now : p.to), display: 'background', classNames: ['bw-closed'] });
    if (p.machine.status === 'out of service') out.push({ start: shift(p.from), end: shift(p.to), display: 'background', classNames: ['bw-out'], title: 'Out of service' });
    for (const c of p.feed.closures.filter((c) => c.machineId === null || c.machineId === p.machine.id)) {
      out.push({ start: shift(c.startsAt), end: shift(c.endsAt), display: 'background', classNames: ['bw-closure'], title: `Closed: ${c.reason}` });
    }
    for (const b of p.feed.bookings.filter((b) => b.machineId === p.machine.id)) {
      const title = b.kind === 'class' ? `Class: ${b.courseName}` : b.mine ? (b.pending ? 'Booking…' : 'Your booking') : b.kind === 'hold' ? 'Held for the waitlist' : b.personName ?? 'Booked';
      out.push({
        id: b.id,
        start: shift(b.startsAt),
        end: shift(b.endsAt),
        title: b.state === 'no-show' ? `${title} (no-show)` : title,
        classNames: [b.mine ? 'bw-mine' : 'bw-busy', b.kind === 'class' ? 'bw-class' : '', b.pending ? 'bw-pending' : ''].filter(Boolean),
        extendedProps: { booking: b },
      });
      if (b.occupiedUntil > b.endsAt) out.push({ start: shift(b.endsAt), end: shift(b.occupiedUntil), display: 'background', classNames: ['bw-cool'] });
    }
    return out;
    // eslint-disable-next-line react-hooks/exhaustive-deps
  }, [p.feed, p.machine.id, p.machine.status, p.from, p.to, p.tz]);

  const fm = p.feed?.machines.find((m) => m.id === p.machine.id);
  const slot = `00:${pad(fm?.slotMinutes ?? 15)}:00`;
  // a drag may only cover open hours (closed time is shaded; the form lists only open hours too)
  const openShifted = useMemo(() => (fm ? fm.open.map((o) => ({ s: shift(o.start).getTime(), e: shift(o.end).getTime() })) : null), [fm, p.tz]); // eslint-disable-line react-hooks/exhaustive-deps

  return (
    <FullCalendar
      ref={ref}
      plugins={[timeGridPlugin, interactionPlugin]}
      initialView={p.view}
      locale={p.fmt.locale}
      initialDate={dateKey(p.first)}
      timeZone="UTC"
      headerToolbar={false}
      stickyHeaderDates={false}
      now={() => shift(new Date())}
      firstDay={1}
      allDaySlot={false}
      nowIndicator={false}
      slotDuration={slot}
      snapDuration={slot}
      slotLabelInterval="01:00"
      slotMinTime="07:00:00"
      slotMaxTime="23:00:00"
      scrollTime="08:00:00"
      height="auto"
      expandRows
      selectable={p.machine.status !== 'out of service'}
      selectMirror
      unselectAuto
      longPressDelay={300}
      selectLongPressDelay={300}
      dayHeaderFormat={p.compact || p.view === 'timeGridDay' ? { weekday: 'short', day: 'numeric' } : { weekday: 'short', day: 'numeric', month: 'short' }}
      slotLabelFormat={(a) => wall.time(a.date.marker)}
      eventTimeFormat={(a) => (a.end ? `${wall.time(a.start.marker)}–${wall.time(a.end.marker)}` : wall.time(a.date.marker))}
      events={events}
      selectAllow={(span) => !openShifted || openShifted.some((o) => span.start.getTime() >= o.s && span.end.getTime() <= o.e)}
      select={p.onSelect}
      eventClick={(arg: EventClickArg) => {
        const b = arg.event.extendedProps.booking as FeedBooking | undefined;
        if (b) p.onPick(b);
      }}
      eventDidMount={(info) => {
        const b = info.event.extendedProps.booking as FeedBooking | undefined;
        if (b) {
          info.el.setAttribute('tabindex', '0');
          info.el.setAttribute('role', 'button');
          // the accessible name is what is shown plus the full time in hidden text (no aria-label that
          // differs from the visible words, which voice-control users say to pick the event)
          const full = document.createElement('span');
          full.className = 'sr-only';
          full.textContent = `, ${info.event.title}, ${formatRange(new Date(b.startsAt), new Date(b.endsAt), p.fmt)}`;
          info.el.appendChild(full);
          info.el.addEventListener('keydown', (e) => {
            if (e.key === 'Enter' || e.key === ' ') {
              e.preventDefault();
              p.onPick(b);
            }
          });
        }
      }}
    />
  );
}

function formatRange(s: Date, e: Date, fmt: SiteFormat): string {
  return fmt.range(s, e);
}


/** What cancelling costs, in plain words: the late-cancellation rule and fee, and the card hold released. */
export function cancelCostText(b: { startsAt: string; cancelTerms?: CancelTerms }, cutoffMinutes: number, now: Date, fmt: SiteFormat): string[] {
  const s = new Date(b.startsAt);
  const late = isLateCancel(s, now, { cancelCutoffMinutes: cutoffMinutes });
  const t = b.cancelTerms;
  const money = (minor: number | null) => (minor !== null && t?.currency ? fmt.money(minor, t.currency) : null);
  const fee = money(t?.lateFeeMinor ?? null);
  const held = money(t?.heldMinor ?? null);
  const out: string[] = [];
  if (late) {
    out.push(
      `The cancellation cut-off (${formatMinutes(cutoffMinutes)} before the start) has passed, so this counts as a late cancellation` +
        (fee ? `: the late-cancellation fee of ${fee} is charged.` : '. No late-cancellation fee is set, but it is recorded.'),
    );
  } else {
    const cut = new Date(s.getTime() - cutoffMinutes * 60_000);
    out.push(`No fee: you are cancelling before the cut-off. From ${fmt.dayTime(cut)} it would count as a late cancellation${fee ? ` (fee ${fee})` : ''}.`);
  }
  out.push(held ? `The ${held} held on your card for this booking is released.` : 'Nothing is held on your card for this booking.');
  out.push('The time becomes free for others.');
  return out;
}

/** A booking opened from the calendar: a modal dialog over the calendar, where the person clicked. Cancelling asks first. */
function BookingDialog(p: { booking: FeedBooking; machineName: string; tz: string; fmt: SiteFormat; cutoff: number; onDone: () => void; onClose: () => void }) {
  const b = p.booking;
  const s = new Date(b.startsAt);
  const ref = useRef<HTMLDialogElement>(null);
  const keepRef = useRef<HTMLButtonElement>(null);
  const headingId = useId();
  const [stage, setStage] = useState<'view' | 'confirm' | 'done'>('view');
  const [answer, setAnswer] = useState<Message | null>(null);
  const canCancel = b.mine && b.state === 'reserved' && !b.pending && new Date(b.endsAt) > new Date();
  const late = isLateCancel(s, new Date(), { cancelCutoffMinutes: p.cutoff });

  useEffect(() => {
    const d = ref.current;
    if (d && !d.open) d.showModal();
    return () => {
      if (d?.open) d.close();
    };
  }, []);
  useEffect(() => {
    if (stage === 'confirm') keepRef.current?.focus();
  }, [stage]);

  const cancel = useMutation({
    mutationFn: () => api<FeedBooking>(`/api/bookings/${b.id}/cancel`, { method: 'POST' }),
    onSuccess: (c) => {
      setStage('done');
      setAnswer({
        tone: c.lateCancel ? 'warn' : 'ok',
        at: Date.now(),
        text: c.lateCancel ? 'Cancelled — after the cut-off, so it counts as a late cancellation.' : 'Cancelled. The time is free for others.',
      });
      p.onDone();
    },
    onError: (err) => {
      setStage('view');
      setAnswer({ tone: 'stop', at: Date.now(), text: `Not cancelled: ${err instanceof ApiError ? err.message : 'check your connection and try again.'}` });
    },
  });

  const title = b.kind === 'class' ? `Class block: ${b.courseName}` : b.mine ? 'Your booking' : 'Booked';
  return (
    <dialog ref={ref} className="bw-dialog card" aria-labelledby={headingId} onClose={p.onClose}>
      <div className="space-y-3 p-4">
        <h2 id={headingId} className="text-lg">
          {stage === 'confirm' ? 'Cancel this booking?' : `${title} · ${p.machineName}`}
        </h2>
        <p>
          {stage === 'confirm' && <>{p.machineName}, </>}
          {formatRange(s, new Date(b.endsAt), p.fmt)} · {stage === 'done' ? 'cancelled' : b.state}
          {b.lateCancel ? ' (late)' : ''}
        </p>
        {stage === 'view' && b.personName && !b.mine && <p className="hint">Booked by {b.personName}</p>}
        {stage === 'view' && b.notes && <p className="hint">Notes: {b.notes}</p>}
        {stage === 'view' && canCancel && late && (
          <p className="notice notice-warn">The cancellation cut-off ({formatMinutes(p.cutoff)} before the start) has passed: cancelling now counts as a late cancellation.</p>
        )}
        {stage === 'confirm' && (
          <ul className="list-disc space-y-1 pl-5" data-cancel-terms>
            {cancelCostText(b, p.cutoff, new Date(), p.fmt).map((line) => (
              <li key={line}>{line}</li>
            ))}
          </ul>
        )}
        <Answer message={answer} label="booking" />
        <div className="flex flex-wrap gap-2">
          {stage === 'view' && canCancel && (
            <button type="button" className="btn btn-primary" onClick={() => { setAnswer(null); setStage('confirm'); }}>
              Cancel booking…
            </button>
          )}
          {stage === 'confirm' && (
            <>
              <button type="button" className="btn btn-primary" onClick={() => cancel.mutate()} disabled={cancel.isPending}>
                {cancel.isPending ? 'Cancelling…' : late ? 'Yes, cancel (late)' : 'Yes, cancel it'}
              </button>
              <button type="button" ref={keepRef} className="btn btn-quiet" onClick={() => setStage('view')} disabled={cancel.isPending}>
                Keep booking
              </button>
            </>
          )}
          {stage !== 'confirm' && (
            <button type="button" className="btn btn-quiet" onClick={() => ref.current?.close()}>Close</button>
          )}
        </div>
      </div>
    </dialog>
  );
}

/** The day's open windows of a machine, as minutes of the site's day, from the feed's open intervals. */
function openWindows(open: { start: string; end: string }[], dayKey: string, tz: string): [number, number][] {
  const d = parseKey(dayKey);
  if (!d) return [];
  const next = addDays(d.year, d.month, d.day, 1);
  const dayStart = localToInstant(d.year, d.month, d.day, 0, tz).getTime();
  const dayEnd = localToInstant(next.year, next.month, next.day, 0, tz).getTime();
  const minute = (t: number) => {
    if (t >= dayEnd) return 1440;
    const w = wallClock(new Date(t), tz);
    return w.hour * 60 + w.minute;
  };
  const out: [number, number][] = [];
  for (const o of open) {
    const s = Math.max(new Date(o.start).getTime(), dayStart);
    const e = Math.min(new Date(o.end).getTime(), dayEnd);
    if (e > s) out.push([minute(s), minute(e)]);
  }
  return out.sort((a, b) => a[0] - b[0]);
}

const toMin = (c: string) => Number(c.slice(0, 2)) * 60 + Number(c.slice(3));
const clock = (m: number) => `${pad(Math.floor(m / 60))}:${pad(m % 60)}`;

/** From and Until choices: only open hours of the machine on that day, on its slot grid (every quarter hour while loading). */
export function clockChoices(windows: [number, number][] | null, step: number, start: string, notBefore = 0): { from: string[]; until: string[] } {
  if (!windows) {
    const all: string[] = [];
    for (let m = 0; m <= 1440; m += 15) all.push(clock(m));
    return { from: all.slice(0, -1), until: all.slice(1) };
  }
  const from: string[] = [];
  for (const [s, e] of windows) for (let m = Math.ceil(Math.max(s, notBefore) / step) * step; m + step <= e; m += step) from.push(clock(m));
  const st = toMin(start);
  const win = windows.find(([s, e]) => st >= s && st < e);
  const until: string[] = [];
  if (win) for (let m = st + step; m <= win[1]; m += step) until.push(clock(m));
  return { from, until };
}

function BookingForm(p: {
  machines: MachineInfo[];
  tz: string;
  fmt: SiteFormat;
  draft: { machineId: string; date: string; start: string; end: string } | null;
  machineId: string;
  onMachine: (id: string) => void;
  date: string;
  onDate: (key: string) => void;
  feedMachine: FeedMachine | undefined;
  isInstructor: boolean;
  busy: boolean;
  onSubmit: (v: { machineId: string; startsAt: Date; endsAt: Date; notes: string; materials: ReturnType<typeof declared>; classBlock?: { courseName: string; studentEmails: string[] } }) => void;
  onClear: () => void;
  children?: React.ReactNode;
}) {
  const { machineId, date } = p;
  const [start, setStart] = useState('10:00');
  const [end, setEnd] = useState('11:00');
  const [notes, setNotes] = useState('');
  const [isClass, setIsClass] = useState(false);
  const [course, setCourse] = useState('');
  const [students, setStudents] = useState('');
  const [error, setError] = useState<string | null>(null);
  const [materials, setMaterials] = useState<MaterialRow[]>(() => [newRow()]);
  const [materialRefused, setMaterialRefused] = useState(false);
  const formRef = useRef<HTMLFormElement>(null);
  const headingId = useId();
  const weekId = useId();

  const fm = p.feedMachine;
  const windows = useMemo(() => (fm ? openWindows(fm.open, date, p.tz) : null), [fm, date, p.tz]);
  const step = fm?.slotMinutes ?? 15;
  // today: only times still ahead
  const now = wallClock(new Date(), p.tz);
  const notBefore = date === `${now.year}-${pad(now.month)}-${pad(now.day)}` ? now.hour * 60 + now.minute : 0;
  const choices = clockChoices(windows, step, start, notBefore);

  useEffect(() => {
    if (!p.draft) return;
    setStart(p.draft.start);
    setEnd(p.draft.end);
    formRef.current?.scrollIntoView({ block: 'nearest' });
    formRef.current?.querySelector<HTMLElement>('textarea, button[type=submit]')?.focus({ preventScroll: true });
  }, [p.draft]);

  // keep From and Until on open hours when the machine or the day changes
  useEffect(() => {
    if (!windows) return;
    if (choices.from.length && !choices.from.includes(start)) setStart(choices.from[0]!);
  }, [windows, start, choices.from]);
  useEffect(() => {
    if (!windows || !choices.until.length) return;
    if (!choices.until.includes(end)) {
      const hour = clock(Math.min(toMin(start) + 60, toMin(choices.until.at(-1)!)));
      setEnd(choices.until.includes(hour) ? hour : choices.until[0]!);
    }
  }, [windows, start, end, choices.until]);

  const closedAllDay = windows !== null && choices.from.length === 0;
  const machineName = p.machines.find((m) => m.id === machineId)?.name ?? 'this machine';

  function submit(e: React.FormEvent) {
    e.preventDefault();
    setError(null);
    const d = parseKey(date);
    if (!d) return setError('Choose a date.');
    if (closedAllDay) return setError(`${machineName} has no open time left on that date. Choose another day.`);
    const startsAt = localToInstant(d.year, d.month, d.day, toMin(start), p.tz);
    const endsAt = localToInstant(d.year, d.month, d.day, toMin(end), p.tz);
    if (endsAt <= startsAt) return setError('The end must be after the start.');
    const classBlock = isClass
      ? { courseName: course.trim(), studentEmails: students.split(/[\s,;]+/).map((s) => s.trim()).filter(Boolean) }
      : undefined;
    if (isClass && !classBlock!.courseName) return setError('Name the course.');
    if (!isClass && materialRefused) return setError('One of the materials is not allowed on this machine as declared: change it or remove it.');
    p.onSubmit({ machineId, startsAt, endsAt, notes: notes.trim(), materials: isClass ? [] : declared(materials), ...(classBlock ? { classBlock } : {}) });
  }

  const week = fm?.week;
  const asked = Math.max(0, toMin(end) - toMin(start));
  return (
    <form ref={formRef} className="card space-y-4 p-4" onSubmit={submit} aria-labelledby={headingId} noValidate>
      <div>
        <h2 id={headingId} className="text-lg">{p.draft ? 'Confirm your booking' : 'Book by date and time'}</h2>
        <p className="hint">Drag across free time on the calendar, or choose here. Check in at the machine within 15 minutes of the start.</p>
      </div>
      <div className="grid gap-3 sm:grid-cols-4">
        <label className="field">
          <span>Machine</span>
          <select className="input" value={machineId} onChange={(e) => p.onMachine(e.target.value)} aria-describedby={weekId}>
            {p.machines.map((m) => (
              <option key={m.id} value={m.id} disabled={m.status === 'out of service'}>{m.name}{m.status === 'out of service' ? ' (out of service)' : ''}</option>
            ))}
          </select>
        </label>
        <label className="field">
          <span>Date</span>
          <input className="input" type="date" value={date} onChange={(e) => p.onDate(e.target.value)} required />
        </label>
        <label className="field">
          <span>From</span>
          <select className="input" value={start} onChange={(e) => setStart(e.target.value)} disabled={closedAllDay}>
            {choices.from.map((c) => <option key={c} value={c}>{c}</option>)}
          </select>
        </label>
        <label className="field">
          <span>Until</span>
          <select className="input" value={end} onChange={(e) => setEnd(e.target.value)} disabled={closedAllDay}>
            {choices.until.map((c) => <option key={c} value={c}>{c}</option>)}
          </select>
        </label>
      </div>
      <div id={weekId} className="space-y-1 text-sm" data-week-use>
        {windows && (
          <p>
            {closedAllDay
              ? `${machineName} has no open time left on ${p.fmt.shortDate(localToInstant(...ymd(date), 12 * 60, p.tz))}. Choose another day.`
              : `Open on ${p.fmt.shortDate(localToInstant(...ymd(date), 12 * 60, p.tz))}: ${windows.map(([s, e]) => `${p.fmt.time(localToInstant(...ymd(date), s, p.tz))}–${p.fmt.time(localToInstant(...ymd(date), e, p.tz))}`).join(', ')}.`}
          </p>
        )}
        {week && !isClass && (
          <p>
            {week.limitMinutes === null
              ? `Your tier has no weekly limit on ${machineName}; you have ${formatMinutes(week.usedMinutes)} booked this week.`
              : `This week on ${machineName}: ${formatMinutes(week.usedMinutes)} booked, ${formatMinutes(Math.max(0, week.limitMinutes - week.usedMinutes))} left of your ${formatMinutes(week.limitMinutes)} weekly limit.`}
            {week.limitMinutes !== null && asked > Math.max(0, week.limitMinutes - week.usedMinutes) && (
              <strong className="block text-stop"> {formatMinutes(asked)} is more than you have left this week.</strong>
            )}
          </p>
        )}
      </div>
      <label className="field">
        <span>Notes for the steward (optional)</span>
        <textarea className="input min-h-20" value={notes} maxLength={2000} onChange={(e) => setNotes(e.target.value)} placeholder="What you will cut or engrave" />
      </label>
      {!isClass && (
        <Suspense fallback={<MaterialsLoading />}>
          <BookingMaterials machineId={machineId} rows={materials} onChange={setMaterials} onVerdicts={setMaterialRefused} />
        </Suspense>
      )}
      {p.isInstructor && (
        <fieldset className="space-y-3 rounded-lg border border-line p-3">
          <legend className="px-1 font-semibold">Class block</legend>
          <label className="flex items-center gap-2">
            <input type="checkbox" className="h-4 w-4 accent-[var(--color-ember)]" checked={isClass} onChange={(e) => setIsClass(e.target.checked)} />
            This is a teaching session (your students work under your supervision)
          </label>
          {isClass && (
            <div className="grid gap-3 sm:grid-cols-2">
              <label className="field">
                <span>Course</span>
                <input className="input" value={course} maxLength={120} onChange={(e) => setCourse(e.target.value)} />
              </label>
              <label className="field">
                <span>Students’ e-mail addresses</span>
                <textarea className="input min-h-20" value={students} onChange={(e) => setStudents(e.target.value)} placeholder="one per line" />
              </label>
            </div>
          )}
        </fieldset>
      )}
      {error && <p className="notice notice-stop" role="alert">{error}</p>}
      <div className="flex flex-wrap gap-2">
        <button type="submit" className="btn btn-primary" disabled={p.busy}>{p.busy ? 'Booking…' : isClass ? 'Book class block' : 'Book'}</button>
        {p.draft && <button type="button" className="btn btn-quiet" onClick={p.onClear}>Clear</button>}
      </div>
      {p.children}
    </form>
  );
}

function ymd(key: string): [number, number, number] {
  const d = parseKey(key) ?? { year: 1970, month: 1, day: 1 };
  return [d.year, d.month, d.day];
}
