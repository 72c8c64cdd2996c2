/**
 * Reports: a period (site time zone) and machines, then one section per report, each fetched from its
 * API route, with a chart where a chart helps and a CSV download of exactly the rows in the table.
 */
import { useEffect, useId, useMemo, useState, type ReactNode } from 'react';
import { Bar, BarChart, CartesianGrid, Legend, ResponsiveContainer, Tooltip, XAxis, YAxis } from 'recharts';
import { api, ApiError } from './ui/api';
import { currencyExponent, siteFormat, type SiteFormat } from '@lib/format';
import type { ClearanceRow, FaultRow, NoShowRow, ReportName, RevenueRow, UtilisationRow } from '@lib/reports';

interface Machine {
  id: string;
  name: string;
  retired: boolean;
}
interface Props {
  timeZone: string;
  /** The site locale, from the server's site settings: every date, number and amount here is written in it. */
  locale: string;
  currency: string;
  machines: Machine[];
  defaultFrom: string;
  defaultTo: string;
  sections: ReportName[];
}
interface Answer<R, T> {
  period: { from: string; to: string; timeZone: string };
  rows: R[];
  totals: T;
}

// no ember here: ember means "your booking" and actions elsewhere. "Booked" is the calendar's booked grey.
const COLORS = ['#4f4a42', '#2b6a3c', '#1f5f8b', '#875500', '#262522', '#7a4f9a'];

function useReport<R, T>(name: ReportName, params: string, enabled: boolean) {
  const [data, setData] = useState<Answer<R, T> | null>(null);
  const [problem, setProblem] = useState<string | null>(null);
  const [loading, setLoading] = useState(false);
  useEffect(() => {
    if (!enabled) return;
    let live = true;
    setLoading(true);
    setProblem(null);
    api<Answer<R, T>>(`/api/reports/${name}?${params}`).then(
      (d) => live && (setData(d), setLoading(false)),
      (e: unknown) => live && (setProblem(e instanceof ApiError ? e.message : 'The report could not be loaded.'), setLoading(false)),
    );
    return () => {
      live = false;
    };
  }, [name, params, enabled]);
  return { data, problem, loading };
}

/** One report: heading, CSV link and intro; once loaded, whatever `before` shows (totals, a chart), then its table. */
function ReportSection<R, T>(props: {
  id: string;
  title: string;
  intro: string;
  csvHref: string;
  report: { data: Answer<R, T> | null; problem: string | null; loading: boolean };
  table: { label: string; columns: Column<R>[]; rowKey: (r: R) => string; empty?: string };
  before?: (data: Answer<R, T>) => ReactNode;
}) {
  const { report } = props;
  return (
    <section className="card mb-6 p-4 sm:p-5" aria-labelledby={props.id} aria-busy={report.loading}>
      <div className="mb-2 flex flex-wrap items-baseline justify-between gap-2">
        <h2 id={props.id} className="text-xl">{props.title}</h2>
        <a className="btn" href={props.csvHref} download>
          Download CSV
        </a>
      </div>
      <p className="hint mb-3">{props.intro}</p>
      {report.problem && <p className="notice notice-stop mb-3" role="alert">{report.problem}</p>}
      {report.data && (
        <>
          {props.before?.(report.data)}
          <ReportTable rows={report.data.rows} {...props.table} />
        </>
      )}
    </section>
  );
}

/** A bar chart of a report, one bar (or stacked part, with `stack`) per key of `bars`, in the report colours. */
function BarFigure(props: {
  label: string;
  data: Record<string, number | string>[];
  x: string;
  bars: string[];
  stack?: string;
  marginLeft: number;
  yWidth?: number;
  yTick: (v: number) => string;
  tip: (v: unknown) => string;
}) {
  return (
    <figure className="mb-4 h-64" aria-label={props.label}>
      <ResponsiveContainer width="100%" height="100%">
        <BarChart data={props.data} margin={{ top: 8, right: 8, bottom: 0, left: props.marginLeft }}>
          <CartesianGrid strokeDasharray="3 3" stroke="#d6ccb9" />
          <XAxis dataKey={props.x} fontSize={12} />
          <YAxis fontSize={12} {...(props.yWidth === undefined ? {} : { width: props.yWidth })} tickFormatter={props.yTick} />
          <Tooltip formatter={(v) => props.tip(v)} />
          <Legend itemSorter={null} />
          {props.bars.map((b, i) => (
            <Bar key={b} dataKey={b} {...(props.stack ? { stackId: props.stack } : {})} fill={COLORS[i % COLORS.length]} isAnimationActive={false} />
          ))}
        </BarChart>
      </ResponsiveContainer>
    </figure>
  );
}

/** A table that may scroll sideways on a phone: focusable, so a keyboard can scroll it too. */
function Scroll({ children, label = 'Table (scrolls sideways)' }: { children: ReactNode; label?: string }) {
  return <div className="overflow-x-auto" tabIndex={0} role="region" aria-label={label}>{children}</div>;
}

function Empty({ what }: { what: string }) {
  return <p className="hint">No {what} in this period.</p>;
}

/** One column of a report table: its heading and how a row shows in it (numbers are right-aligned). */
interface Column<R> {
  head: string;
  cell: (r: R) => ReactNode;
  numeric?: boolean;
}

/** A report's table, driven by its columns list; with `empty`, no rows shows "No … in this period." instead. */
function ReportTable<R>(props: { label: string; rows: R[]; columns: Column<R>[]; rowKey: (r: R) => string; empty?: string }) {
  if (props.empty !== undefined && props.rows.length === 0) return <Empty what={props.empty} />;
  const align = (c: Column<R>) => (c.numeric ? 'text-right' : undefined);
  return (
    <Scroll label={props.label}>
      <table className="table whitespace-nowrap">
        <thead><tr>{props.columns.map((c) => <th key={c.head} className={align(c)}>{c.head}</th>)}</tr></thead>
        <tbody>
          {props.rows.map((r) => (
            <tr key={props.rowKey(r)}>{props.columns.map((c) => <td key={c.head} className={align(c)}>{c.cell(r)}</td>)}</tr>
          ))}
        </tbody>
      </table>
    </Scroll>
  );
}

/** The columns of each report's table, written in the site's locale. */
function reportColumns(f: SiteFormat) {
  const pct = (v: number | null) => (v === null ? '—' : f.percent(v));
  const hours = (minutes: number) => `${f.number(minutes / 60, 1)} h`;
  const UTILISATION_COLUMNS: Column<UtilisationRow>[] = [
    { head: 'Machine', cell: (r) => r.machine },
    { head: 'Week from', cell: (r) => f.day(r.week_start) },
    { head: 'Open', numeric: true, cell: (r) => hours(r.open_minutes) },
    { head: 'Booked', numeric: true, cell: (r) => <>{hours(r.booked_minutes)} <span className="hint">{pct(r.booked_share)}</span></> },
    { head: 'Beam time', numeric: true, cell: (r) => <>{hours(r.beam_minutes)} <span className="hint">{pct(r.beam_share)}</span></> },
  ];
  const REVENUE_COLUMNS: Column<RevenueRow>[] = [
    { head: 'Month', cell: (r) => f.month(r.month) },
    { head: 'Machine', cell: (r) => r.machine || '—' },
    { head: 'Tier', cell: (r) => r.tier },
    { head: 'Method', cell: (r) => r.method },
    { head: 'Charges', numeric: true, cell: (r) => r.charges },
    { head: 'Net', numeric: true, cell: (r) => f.money(r.net_minor, r.currency) },
    { head: 'Tax', numeric: true, cell: (r) => f.money(r.tax_minor, r.currency) },
  ];
  const CLEARANCE_COLUMNS: Column<ClearanceRow>[] = [
    { head: 'Group', cell: (r) => r.group },
    { head: 'Quiz started', numeric: true, cell: (r) => r.quiz_started },
    { head: 'Passed', numeric: true, cell: (r) => r.quiz_passed },
    { head: 'Seat booked', numeric: true, cell: (r) => r.seats_booked },
    { head: 'Attended', numeric: true, cell: (r) => r.attended },
    { head: 'Signed off', numeric: true, cell: (r) => r.signed_off },
    { head: 'Lapsed', numeric: true, cell: (r) => r.lapsed },
  ];
  const FAULT_COLUMNS: Column<FaultRow>[] = [
    { head: 'Machine', cell: (r) => r.machine },
    { head: 'Stop', numeric: true, cell: (r) => r.stop },
    { head: 'Degraded', numeric: true, cell: (r) => r.degraded },
    { head: 'Note', numeric: true, cell: (r) => r.note },
    { head: 'Open now', numeric: true, cell: (r) => r.open_now },
    { head: 'Out of service', numeric: true, cell: (r) => hours(r.out_of_service_minutes) },
    { head: 'Mean to return', numeric: true, cell: (r) => (r.mean_minutes_to_return === null ? '—' : hours(r.mean_minutes_to_return)) },
  ];
  const NO_SHOW_COLUMNS: Column<NoShowRow>[] = [
    { head: 'Person', cell: (r) => <>{r.person} <span className="hint">{r.email}</span></> },
    { head: 'Bookings', numeric: true, cell: (r) => r.bookings },
    { head: 'No-shows', numeric: true, cell: (r) => <>{r.no_shows} <span className="hint">{pct(r.no_show_share)}</span></> },
    { head: 'Late cancellations', numeric: true, cell: (r) => r.late_cancellations },
  ];
  return { UTILISATION_COLUMNS, REVENUE_COLUMNS, CLEARANCE_COLUMNS, FAULT_COLUMNS, NO_SHOW_COLUMNS };
}

export default function ReportsPanel(props: Props) {
  const ids = { from: useId(), to: useId() };
  const [from, setFrom] = useState(props.defaultFrom);
  const [to, setTo] = useState(props.defaultTo);
  const [chosen, setChosen] = useState<string[]>([]);
  const [applied, setApplied] = useState({ from: props.defaultFrom, to: props.defaultTo, machines: [] as string[] });
  const [formProblem, setFormProblem] = useState<string | null>(null);
  const params = useMemo(() => {
    const p = new URLSearchParams({ from: applied.from, to: applied.to });
    if (applied.machines.length) p.set('machineId', applied.machines.join(','));
    return p.toString();
  }, [applied]);
  const has = (n: ReportName) => props.sections.includes(n);
  const util = useReport<UtilisationRow, { openMinutes: number; bookedMinutes: number; beamMinutes: number; bookedShare: number | null; beamShare: number | null }>('utilisation', params, has('utilisation'));
  const revenue = useReport<RevenueRow, { charges: number; grossMinor: number; refundedMinor: number; netMinor: number; taxMinor: number; cardNetMinor: number; rechargeNetMinor: number }>('revenue', params, has('revenue'));
  const clear = useReport<ClearanceRow, { quizStarted: number; quizPassed: number; seatsBooked: number; attended: number; signedOff: number; lapsed: number }>('clearances', params, has('clearances'));
  const faults = useReport<FaultRow, { note: number; degraded: number; stop: number; openNow: number; outOfServiceMinutes: number; returnsToService: number; meanMinutesToReturn: number | null }>('faults', params, has('faults'));
  const noShows = useReport<NoShowRow, { bookings: number; noShows: number; lateCancellations: number }>('no-shows', params, has('no-shows'));
  const f = useMemo(() => siteFormat(props.locale, props.timeZone), [props.locale, props.timeZone]);
  const money = (m: number) => f.money(m, props.currency);
  const pct = (v: number | null) => (v === null ? '—' : f.percent(v));
  const hours = (minutes: number) => `${f.number(minutes / 60, 1)} h`;
  const monthWords = (ym: string) => f.month(ym);
  const { UTILISATION_COLUMNS, REVENUE_COLUMNS, CLEARANCE_COLUMNS, FAULT_COLUMNS, NO_SHOW_COLUMNS } = useMemo(() => reportColumns(f), [f]);
  // chart values in major units of the currency (its own exponent: JPY 0, BHD 3)
  const major = (minor: number, currency: string) => minor / 10 ** currencyExponent(currency);
  const csv = (n: ReportName) => `/api/reports/${n}.csv?${params}`;

  function apply(e: React.FormEvent) {
    e.preventDefault();
    if (!from || !to) return setFormProblem('Choose both dates.');
    if (from > to) return setFormProblem('The end date is before the start date.');
    setFormProblem(null);
    setApplied({ from, to, machines: chosen });
  }

  // utilisation chart: per week, all chosen machines together
  const utilChart = useMemo(() => {
    const byWeek = new Map<string, { week: string; open: number; booked: number; beam: number }>();
    for (const r of util.data?.rows ?? []) {
      const w = byWeek.get(r.week_start) ?? { week: r.week_start, open: 0, booked: 0, beam: 0 };
      w.open += r.open_minutes;
      w.booked += r.booked_minutes;
      w.beam += r.beam_minutes;
      byWeek.set(r.week_start, w);
    }
    const years = new Set([...byWeek.keys()].map((k) => k.slice(0, 4)));
    const spansYears = years.size > 1;
    return [...byWeek.values()].map((w) => ({
      week: f.day(w.week, spansYears),
      Booked: w.open ? Math.round((w.booked / w.open) * 1000) / 10 : 0,
      'Beam time': w.open ? Math.round((w.beam / w.open) * 1000) / 10 : 0,
    }));
  }, [util.data, f]);

  // revenue chart: net per month, stacked by machine
  const { revenueChart, revenueMachines } = useMemo(() => {
    const names = [...new Set((revenue.data?.rows ?? []).map((r) => r.machine || 'No machine'))];
    const byMonth = new Map<string, Record<string, number | string>>();
    for (const r of revenue.data?.rows ?? []) {
      const row = byMonth.get(r.month) ?? { month: monthWords(r.month) };
      const key = r.machine || 'No machine';
      row[key] = Number(row[key] ?? 0) + major(r.net_minor, r.currency);
      byMonth.set(r.month, row);
    }
    return { revenueChart: [...byMonth.values()], revenueMachines: names };
  }, [revenue.data, f]); // eslint-disable-line react-hooks/exhaustive-deps

  return (
    <div>
      <form className="card mb-6 flex flex-wrap items-end gap-4 p-4" onSubmit={apply} aria-label="Report period and machines">
        <label className="field" htmlFor={ids.from}>
          <span>From</span>
          <input id={ids.from} className="input" type="date" value={from} onChange={(e) => setFrom(e.target.value)} required />
        </label>
        <label className="field" htmlFor={ids.to}>
          <span>To</span>
          <input id={ids.to} className="input" type="date" value={to} onChange={(e) => setTo(e.target.value)} required />
        </label>
        {has('utilisation') && (
          <fieldset className="field min-w-0">
            <legend className="mb-1 font-semibold">Machines</legend>
            <div className="flex flex-wrap gap-x-4 gap-y-1">
              {props.machines.map((m) => (
                <label key={m.id} className="inline-flex items-center gap-2">
                  <input
                    type="checkbox"
                    checked={chosen.includes(m.id)}
                    onChange={(e) => setChosen((c) => (e.target.checked ? [...c, m.id] : c.filter((x) => x !== m.id)))}
                  />
                  {m.name}
                  {m.retired && <span className="hint">(retired)</span>}
                </label>
              ))}
            </div>
            <span className="hint">None ticked: every machine in use.</span>
          </fieldset>
        )}
        <button className="btn btn-primary" type="submit">Show</button>
        {formProblem && <p className="notice notice-stop w-full" role="alert">{formProblem}</p>}
        <p className="hint w-full">
          Showing {f.day(applied.from)} to {f.day(applied.to)} (both days included, {props.timeZone}).
        </p>
      </form>

      {has('utilisation') && (
        <ReportSection id="r-util" title="Utilisation" csvHref={csv('utilisation')} report={util}
          intro="Booked time (reservations, check-ins, completed bookings and no-shows) and measured beam time, as a share of the open hours (weekly hours minus closures), per machine and week."
          table={{ label: 'Utilisation table (scrolls sideways)', columns: UTILISATION_COLUMNS, empty: 'machines', rowKey: (r) => `${r.machine_id}-${r.week_start}` }}
          before={(d) => (
            <>
              <p className="mb-3" data-testid="util-totals">
                Open {hours(d.totals.openMinutes)} · booked {hours(d.totals.bookedMinutes)} ({pct(d.totals.bookedShare)}) · beam time{' '}
                {hours(d.totals.beamMinutes)} ({pct(d.totals.beamShare)})
              </p>
              <p className="hint mb-3">
                Beam time can be more than booked time: walk-up sessions (used at the machine without a booking) count as beam time but not as booked time.
              </p>
              {utilChart.length > 0 && (
                <BarFigure label="Utilisation by week, percent of open hours" data={utilChart} x="week" bars={['Booked', 'Beam time']} marginLeft={-16}
                  yTick={(v) => f.percent(v / 100, 0)} tip={(v) => f.percent(Number(v) / 100)} />
              )}
            </>
          )} />
      )}

      {has('revenue') && (
        <ReportSection id="r-revenue" title="Revenue and recharge" csvHref={csv('revenue')} report={revenue}
          intro="Charges taken by card (captured, refunded, settled) and billed to cost centres (recharged), by the month they were made, machine, tier and method. Net is after refunds; tax is included in the amounts. Holds, failed payments and small carried amounts are not revenue until paid."
          table={{ label: 'Revenue table (scrolls sideways)', columns: REVENUE_COLUMNS, empty: 'charges', rowKey: (r) => `${r.month}-${r.machine_id}-${r.tier}-${r.method}-${r.currency}` }}
          before={(d) => (
            <>
              <dl className="mb-3 grid grid-cols-2 gap-2 sm:grid-cols-4" data-testid="revenue-totals">
                <div><dt className="hint">Net</dt><dd className="text-lg font-semibold" data-testid="revenue-net">{money(d.totals.netMinor)}</dd></div>
                <div><dt className="hint">Card</dt><dd>{money(d.totals.cardNetMinor)}</dd></div>
                <div><dt className="hint">Recharge</dt><dd>{money(d.totals.rechargeNetMinor)}</dd></div>
                <div><dt className="hint">Refunded</dt><dd>{money(d.totals.refundedMinor)}</dd></div>
              </dl>
              {revenueChart.length > 0 && (
                <BarFigure label={`Net revenue by month and machine, ${props.currency}`} data={revenueChart} x="month" bars={revenueMachines} stack="net" marginLeft={0} yWidth={64}
                  yTick={(v) => f.moneyShort(Math.round(v * 10 ** currencyExponent(props.currency)), props.currency)}
                  tip={(v) => f.money(Math.round(Number(v) * 10 ** currencyExponent(props.currency)), props.currency)} />
              )}
            </>
          )} />
      )}

      {has('clearances') && (
        <ReportSection id="r-clear" title="Clearance funnel" csvHref={csv('clearances')} report={clear}
          intro="People per machine group who, in this period, started a quiz, passed it, booked a seat at an induction session starting in the period, attended it, were signed off, and whose clearance lapsed without renewal."
          table={{ label: 'Clearance funnel table (scrolls sideways)', columns: CLEARANCE_COLUMNS, empty: 'machine groups', rowKey: (r) => r.group_id }} />
      )}

      {has('faults') && (
        <ReportSection id="r-faults" title="Faults and time out of service" csvHref={csv('faults')} report={faults}
          intro="Faults reported in this period by severity, faults still open, time each machine was out of service, and the mean time from going out of service to running again."
          table={{ label: 'Faults table (scrolls sideways)', columns: FAULT_COLUMNS, rowKey: (r) => r.machine_id }}
          before={(d) => (
            <p className="mb-3" data-testid="fault-totals">
              {d.totals.stop} stop · {d.totals.degraded} degraded · {d.totals.note} note · out of service{' '}
              {hours(d.totals.outOfServiceMinutes)} · mean time to return{' '}
              {d.totals.meanMinutesToReturn === null ? '—' : hours(d.totals.meanMinutesToReturn)}
            </p>
          )} />
      )}

      {has('no-shows') && (
        <ReportSection id="r-noshow" title="No-shows and late cancellations" csvHref={csv('no-shows')} report={noShows}
          intro="People with a no-show or a late cancellation among their personal bookings that started in this period: a starting point for a fair-use conversation, not a verdict."
          table={{ label: 'No-shows table (scrolls sideways)', columns: NO_SHOW_COLUMNS, empty: 'no-shows or late cancellations', rowKey: (r) => r.person_id }} />
      )}
    </div>
  );
}
