/**
 * The Book screen: a FullCalendar time grid per machine (one machine, or all side by side), week and
 * day views, data from the API through react-query. Drag across free time to book; the booking shows at
 * once and is taken back if the server refuses it (with the reason). A form does the same by keyboard.
 *
 * Times: the calendar runs in UTC holding the site's wall-clock times ("shifted" instants), so the grid
 * always shows the site's hours whatever the browser's zone; conversions use the pure availability module.
 */
import { useEffect, useId, useMemo, useRef, useState } from 'react';
import BookingMaterials, { declared, newRow, type MaterialRow } from './BookingMaterials';
import { QueryClient, QueryClientProvider, useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import FullCalendar from '@fullcalendar/react';
import timeGridPlugin from '@fullcalendar/timegrid';
import interactionPlugin from '@fullcalendar/interaction';
import type { DateSelectArg, EventClickArg, EventInput } from '@fullcalendar/core';
import { addDays, isLateCancel, localToInstant, wallClock, zoneOffsetMinutes } from '../lib/availability';
import { api, ApiError } from './ui/api';

interface MachineInfo {
  id: string;
  name: string;
  status: string;
}
interface FeedBooking {
  id: string;
  machineId: string;
  startsAt: string;
  endsAt: string;
  occupiedUntil: string;
  state: string;
  kind: 'personal' | 'class' | 'hold';
  mine: boolean;
  personName: string | null;
  courseName: string | null;
  notes: string | null;
  lateCancel: boolean;
  pending?: boolean;
}
interface FeedMachine extends MachineInfo {
  open: { start: string; end: string }[];
  slotMinutes: number;
  minMinutes: number;
  maxMinutes: number;
  bufferMinutes: number;
  cancelCutoffMinutes: number;
}
interface Feed {
  timeZone: string;
  bookings: FeedBooking[];
  closures: { id: string; machineId: string | null; startsAt: string; endsAt: string; reason: string }[];
  machines: FeedMachine[];
}

export interface BookProps {
  machines: MachineInfo[];
  timeZone: string;
  isInstructor: boolean;
  initialMachine?: string;
  /** True when the person may book no machine at all: the page says why, and the form is not shown. */
  hideForm?: boolean;
}

type View = 'timeGridWeek' | 'timeGridDay';
type LocalDate = { year: number; month: number; day: number };

const pad = (n: number) => String(n).padStart(2, '0');
const dateKey = (d: LocalDate) => `${d.year}-${pad(d.month)}-${pad(d.day)}`;

export default function BookCalendar(props: BookProps) {
  const [client] = useState(() => new QueryClient({ defaultOptions: { queries: { staleTime: 15_000, refetchOnWindowFocus: true } } }));
  return (
    <QueryClientProvider client={client}>
      <Book {...props} />
    </QueryClientProvider>
  );
}

function Book({ machines, timeZone: tz, isInstructor, initialMachine, hideForm }: BookProps) {
  const qc = useQueryClient();
  const today = useMemo(() => {
    const w = wallClock(new Date(), tz);
    return { year: w.year, month: w.month, day: w.day };
  }, [tz]);
  const [machineSel, setMachineSel] = useState<string>(initialMachine && machines.some((m) => m.id === initialMachine) ? initialMachine : machines[0]?.id ?? 'all');
  const [view, setView] = useState<View>('timeGridWeek');
  const [date, setDate] = useState<LocalDate>(today);
  const [message, setMessage] = useState<{ tone: 'ok' | 'stop' | 'warn'; text: string; waitlist?: { machineId: string; startsAt: string; endsAt: string } } | null>(null);
  const [draft, setDraft] = useState<{ machineId: string; date: string; start: string; end: string } | null>(null);
  const [selected, setSelected] = useState<FeedBooking | null>(null);

  useEffect(() => {
    if (window.matchMedia('(max-width: 640px)').matches) setView('timeGridDay');
  }, []);

  // the visible range, in real instants
  const range = useMemo(() => {
    const js = new Date(Date.UTC(date.year, date.month - 1, date.day)).getUTCDay();
    const first = view === 'timeGridWeek' ? addDays(date.year, date.month, date.day, -((js + 6) % 7)) : date;
    const days = view === 'timeGridWeek' ? 7 : 1;
    const last = addDays(first.year, first.month, first.day, days);
    return { first, from: localToInstant(first.year, first.month, first.day, 0, tz), to: localToInstant(last.year, last.month, last.day, 0, tz) };
  }, [date, view, tz]);

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
      setMessage(null);
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
      setMessage({ tone: 'stop', text: `Not booked: ${text}`, ...(canWait ? { waitlist: { machineId: v.machineId, startsAt: v.startsAt.toISOString(), endsAt: v.endsAt.toISOString() } } : {}) });
    },
    onSuccess: (b) => {
      setDraft(null);
      const notice = (b as { paymentNotice?: string | null }).paymentNotice;
      setMessage({ tone: notice ? 'warn' : 'ok', text: `Booked: ${machineName(b.machineId)}, ${formatRange(new Date(b.startsAt), new Date(b.endsAt), tz)}. A confirmation with a calendar file is on its way by e-mail.${notice ? ` ${notice}` : ''}` });
    },
    onSettled: () => qc.invalidateQueries({ queryKey: ['feed'] }),
  });

  const cancel = useMutation({
    mutationFn: (id: string) => api<FeedBooking>(`/api/bookings/${id}/cancel`, { method: 'POST' }),
    onSuccess: (b) => {
      setSelected(null);
      setMessage({ tone: b.lateCancel ? 'warn' : 'ok', text: b.lateCancel ? 'Cancelled — after the cut-off, so it counts as a late cancellation.' : 'Cancelled. The time is free for others.' });
    },
    onError: (err) => setMessage({ tone: 'stop', text: err instanceof ApiError ? err.message : 'Not cancelled; try again.' }),
    onSettled: () => qc.invalidateQueries({ queryKey: ['feed'] }),
  });

  const waitlist = useMutation({
    mutationFn: (w: { machineId: string; startsAt: string; endsAt: string }) => api('/api/waitlist', { method: 'POST', json: w }),
    onSuccess: () => setMessage({ tone: 'ok', text: 'You are on the waitlist. If that time frees up you will get an e-mail with a link that holds it for you for 15 minutes.' }),
    onError: (err) => setMessage({ tone: 'stop', text: err instanceof ApiError ? err.message : 'Could not join the waitlist.' }),
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
      setMessage({ tone: 'stop', text: `${machine.name} is out of service and takes no bookings.` });
      return;
    }
    setSelected(null);
    setDraft({ machineId, date: dateKey(s.date), start: s.clock, end: e.clock === '00:00' ? '24:00' : e.clock });
  }

  function fromShifted(d: Date) {
    const date = { year: d.getUTCFullYear(), month: d.getUTCMonth() + 1, day: d.getUTCDate() };
    return { date, clock: `${pad(d.getUTCHours())}:${pad(d.getUTCMinutes())}` };
  }

  const data = feed.data;
  const rangeLabel =
    view === 'timeGridWeek'
      ? `Week of ${new Intl.DateTimeFormat('en-NZ', { timeZone: tz, day: 'numeric', month: 'long', year: 'numeric' }).format(range.from)}`
      : new Intl.DateTimeFormat('en-NZ', { timeZone: tz, weekday: 'long', day: 'numeric', month: 'long', year: 'numeric' }).format(range.from);

  return (
    <div className="space-y-4">
      <div className="flex flex-wrap items-end gap-3">
        <label className="field">
          <span>Machine</span>
          <select className="input" value={machineSel} onChange={(e) => setMachineSel(e.target.value)} aria-label="Machine">
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
              const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(e.target.value);
              if (m) setDate({ year: Number(m[1]), month: Number(m[2]), day: Number(m[3]) });
            }}
          />
        </label>
      </div>

      <h2 className="text-lg" aria-live="polite">{rangeLabel} <span className="hint">· times in {tz}</span></h2>
      <Legend />

      <div role="status" aria-live="polite">
        {message && (
          <div className={`notice notice-${message.tone} flex flex-wrap items-center gap-3`}>
            <span>{message.text}</span>
            {message.waitlist && (
              <button type="button" className="btn btn-quiet" onClick={() => waitlist.mutate(message.waitlist!)} disabled={waitlist.isPending}>
                Tell me if it frees up
              </button>
            )}
          </div>
        )}
      </div>
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
                compact={shown.length > 1}
                onSelect={(arg) => onSelect(m.id, arg)}
                onPick={(b) => {
                  setDraft(null);
                  setSelected(b);
                }}
              />
            </section>
          );
        })}
      </div>

      {selected && (
        <BookingPanel
          booking={selected}
          machineName={machineName(selected.machineId)}
          tz={tz}
          cutoff={data?.machines.find((m) => m.id === selected.machineId)?.cancelCutoffMinutes ?? 0}
          busy={cancel.isPending}
          onCancel={() => cancel.mutate(selected.id)}
          onClose={() => setSelected(null)}
        />
      )}

      {!hideForm && <BookingForm
        machines={machines}
        tz={tz}
        draft={draft}
        today={today}
        isInstructor={isInstructor}
        busy={create.isPending}
        onSubmit={(v) => create.mutate(v)}
        onClear={() => setDraft(null)}
      />}
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
  compact: boolean;
  onSelect: (arg: DateSelectArg) => void;
  onPick: (b: FeedBooking) => void;
}) {
  const ref = useRef<FullCalendar>(null);
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

  return (
    <FullCalendar
      ref={ref}
      plugins={[timeGridPlugin, interactionPlugin]}
      initialView={p.view}
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
      slotLabelFormat={{ hour: '2-digit', minute: '2-digit', hour12: false }}
      eventTimeFormat={{ hour: '2-digit', minute: '2-digit', hour12: false }}
      events={events}
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
          full.textContent = `, ${info.event.title}, ${formatRange(new Date(b.startsAt), new Date(b.endsAt), p.tz)}`;
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

function formatRange(s: Date, e: Date, tz: string): string {
  const day = new Intl.DateTimeFormat('en-NZ', { timeZone: tz, weekday: 'short', day: 'numeric', month: 'short' }).format(s);
  const t = new Intl.DateTimeFormat('en-NZ', { timeZone: tz, hour: '2-digit', minute: '2-digit', hourCycle: 'h23' });
  return `${day}, ${t.format(s)}–${t.format(e)}`;
}

function BookingPanel(p: { booking: FeedBooking; machineName: string; tz: string; cutoff: number; busy: boolean; onCancel: () => void; onClose: () => void }) {
  const b = p.booking;
  const s = new Date(b.startsAt);
  const late = isLateCancel(s, new Date(), { cancelCutoffMinutes: p.cutoff });
  const headingId = useId();
  const canCancel = b.mine && b.state === 'reserved' && !b.pending && new Date(b.endsAt) > new Date();
  return (
    <section className="card space-y-3 p-4" aria-labelledby={headingId}>
      <h2 id={headingId} className="text-lg">
        {b.kind === 'class' ? `Class block: ${b.courseName}` : b.mine ? 'Your booking' : 'Booked'} · {p.machineName}
      </h2>
      <p>{formatRange(s, new Date(b.endsAt), p.tz)} · {b.state}{b.lateCancel ? ' (late)' : ''}</p>
      {b.personName && !b.mine && <p className="hint">Booked by {b.personName}</p>}
      {b.notes && <p className="hint">Notes: {b.notes}</p>}
      {canCancel && late && (
        <p className="notice notice-warn">The cancellation cut-off ({p.cutoff} min before the start) has passed: cancelling now counts as a late cancellation.</p>
      )}
      <div className="flex flex-wrap gap-2">
        {canCancel && (
          <button type="button" className="btn btn-primary" onClick={p.onCancel} disabled={p.busy}>
            {p.busy ? 'Cancelling…' : 'Cancel booking'}
          </button>
        )}
        <button type="button" className="btn btn-quiet" onClick={p.onClose}>Close</button>
      </div>
    </section>
  );
}

function clockOptions(): string[] {
  const out: string[] = [];
  for (let m = 0; m <= 1440; m += 15) out.push(`${pad(Math.floor(m / 60))}:${pad(m % 60)}`);
  return out;
}
const CLOCKS = clockOptions();

function BookingForm(p: {
  machines: MachineInfo[];
  tz: string;
  draft: { machineId: string; date: string; start: string; end: string } | null;
  today: LocalDate;
  isInstructor: boolean;
  busy: boolean;
  onSubmit: (v: { machineId: string; startsAt: Date; endsAt: Date; notes: string; materials: ReturnType<typeof declared>; classBlock?: { courseName: string; studentEmails: string[] } }) => void;
  onClear: () => void;
}) {
  const [machineId, setMachineId] = useState(p.machines[0]?.id ?? '');
  const [date, setDate] = useState(dateKey(p.today));
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

  useEffect(() => {
    if (!p.draft) return;
    setMachineId(p.draft.machineId);
    setDate(p.draft.date);
    setStart(p.draft.start);
    setEnd(p.draft.end);
    formRef.current?.scrollIntoView({ block: 'nearest' });
    formRef.current?.querySelector<HTMLElement>('textarea, button[type=submit]')?.focus({ preventScroll: true });
  }, [p.draft]);

  function submit(e: React.FormEvent) {
    e.preventDefault();
    setError(null);
    const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(date);
    if (!m) return setError('Choose a date.');
    const toMin = (c: string) => Number(c.slice(0, 2)) * 60 + Number(c.slice(3));
    const y = Number(m[1]);
    const mo = Number(m[2]);
    const d = Number(m[3]);
    const startsAt = localToInstant(y, mo, d, toMin(start), p.tz);
    const endsAt = localToInstant(y, mo, d, toMin(end), p.tz);
    if (endsAt <= startsAt) return setError('The end must be after the start.');
    const classBlock = isClass
      ? { courseName: course.trim(), studentEmails: students.split(/[\s,;]+/).map((s) => s.trim()).filter(Boolean) }
      : undefined;
    if (isClass && !classBlock!.courseName) return setError('Name the course.');
    if (!isClass && materialRefused) return setError('One of the materials is not allowed on this machine as declared: change it or remove it.');
    p.onSubmit({ machineId, startsAt, endsAt, notes: notes.trim(), materials: isClass ? [] : declared(materials), ...(classBlock ? { classBlock } : {}) });
  }

  return (
    <form ref={formRef} className="card space-y-4 p-4" onSubmit={submit} aria-labelledby={headingId} noValidate>
      <div>
        <h2 id={headingId} className="text-lg">{p.draft ? 'Confirm your booking' : 'Book by date and time'}</h2>
        <p className="hint">Drag across free time on the calendar, or choose here. Check in at the machine within 15 minutes of the start.</p>
      </div>
      <div className="grid gap-3 sm:grid-cols-4">
        <label className="field">
          <span>Machine</span>
          <select className="input" value={machineId} onChange={(e) => setMachineId(e.target.value)}>
            {p.machines.map((m) => (
              <option key={m.id} value={m.id} disabled={m.status === 'out of service'}>{m.name}</option>
            ))}
          </select>
        </label>
        <label className="field">
          <span>Date</span>
          <input className="input" type="date" value={date} onChange={(e) => setDate(e.target.value)} required />
        </label>
        <label className="field">
          <span>From</span>
          <select className="input" value={start} onChange={(e) => setStart(e.target.value)}>
            {CLOCKS.slice(0, -1).map((c) => <option key={c} value={c}>{c}</option>)}
          </select>
        </label>
        <label className="field">
          <span>Until</span>
          <select className="input" value={end} onChange={(e) => setEnd(e.target.value)}>
            {CLOCKS.slice(1).map((c) => <option key={c} value={c}>{c}</option>)}
          </select>
        </label>
      </div>
      <label className="field">
        <span>Notes for the steward (optional)</span>
        <textarea className="input min-h-20" value={notes} maxLength={2000} onChange={(e) => setNotes(e.target.value)} placeholder="What you will cut or engrave" />
      </label>
      {!isClass && <BookingMaterials machineId={machineId} rows={materials} onChange={setMaterials} onVerdicts={setMaterialRefused} />}
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
    </form>
  );
}
