/** Admin › Audit: the append-only record of changes, filtered by person, kind, text and dates; exported as CSV. */
import { auditDetailLines, auditKindWords, withSiteDates } from '@lib/audit-words';
import { siteFormat } from '@lib/format';
import { Pager } from './ui/Pager';
import { useCallback, useEffect, useId, useMemo, useRef, useState } from 'react';
import { api, ApiError } from './ui/api';
import { useSettledText } from './ui/useSettledText';
import type { AuditRow as AuditRecord } from '@lib/audit-filter';
import type { Json } from '@lib/json';

type AuditRow = Json<AuditRecord>;
interface PageData {
  total: number;
  page: number;
  pageSize: number;
  rows: AuditRow[];
}
interface Facets {
  kinds: string[];
  actors: { id: string; name: string; email: string }[];
}
type Sort = 'at' | 'kind' | 'actor';

export default function AuditLog({ timeZone, locale }: { timeZone: string; locale: string }) {
  const [q, setQ] = useState('');
  const [query, setQuery] = useState('');
  const [actor, setActor] = useState('');
  const [kind, setKind] = useState('');
  const [from, setFrom] = useState('');
  const [to, setTo] = useState('');
  const [sort, setSort] = useState<Sort>('at');
  const [dir, setDir] = useState<'asc' | 'desc'>('desc');
  const [page, setPage] = useState(1);
  const [data, setData] = useState<PageData | null>(null);
  const [facets, setFacets] = useState<Facets>({ kinds: [], actors: [] });
  const [loading, setLoading] = useState(true);
  const [problem, setProblem] = useState<string | null>(null);
  const [open, setOpen] = useState<number | null>(null);
  const ids = { search: useId(), actor: useId(), kind: useId(), from: useId(), to: useId() };
  const pageSize = 25;
  const latest = useRef(0); // only the answer to the newest request is shown

  const when = useMemo(
    () => ({ format: (d: Date) => siteFormat(locale, timeZone).dateTime(d) }),
    [timeZone, locale],
  );

  useSettledText(q, (text) => {
    setQuery(text);
    setPage(1);
  });

  useEffect(() => {
    api<Facets>('/api/audit/facets').then(setFacets, () => undefined);
  }, []);

  const filterParams = useCallback(() => {
    const p = new URLSearchParams();
    if (query) p.set('q', query);
    if (actor) p.set('actor', actor);
    if (kind) p.set('kind', kind);
    if (from) p.set('from', from);
    if (to) p.set('to', to);
    return p;
  }, [query, actor, kind, from, to]);

  const load = useCallback(async () => {
    const ticket = ++latest.current;
    setLoading(true);
    const params = filterParams();
    params.set('page', String(page));
    params.set('pageSize', String(pageSize));
    params.set('sort', sort);
    params.set('dir', dir);
    try {
      const answer = await api<PageData>(`/api/audit?${params}`);
      if (ticket !== latest.current) return;
      setData(answer);
      setProblem(null);
    } catch (e) {
      if (ticket !== latest.current) return;
      setProblem(e instanceof ApiError ? (e.fields ? Object.values(e.fields).join(' ') : e.message) : 'Could not load the audit log.');
    } finally {
      if (ticket === latest.current) setLoading(false);
    }
  }, [filterParams, page, sort, dir]);

  useEffect(() => {
    void load();
  }, [load]);

  function sortBy(column: Sort) {
    if (sort === column) setDir(dir === 'asc' ? 'desc' : 'asc');
    else {
      setSort(column);
      setDir(column === 'at' ? 'desc' : 'asc');
    }
    setPage(1);
  }

  function clear() {
    setQ('');
    setQuery('');
    setActor('');
    setKind('');
    setFrom('');
    setTo('');
    setPage(1);
  }

  const pages = data ? Math.max(1, Math.ceil(data.total / pageSize)) : 1;
  const sortMark = (c: Sort) => (sort === c ? (dir === 'asc' ? ' ▲' : ' ▼') : '');
  const ariaSort = (c: Sort) => (sort === c ? (dir === 'asc' ? 'ascending' : 'descending') : 'none');
  const csvHref = `/api/audit.csv?${filterParams()}`;

  return (
    <div className="space-y-4">
      <form className="card grid grid-cols-1 gap-3 p-4 sm:grid-cols-2 lg:grid-cols-6" role="search" aria-label="Filter the audit log" onSubmit={(e) => e.preventDefault()}>
        <label className="field min-w-0 lg:col-span-2" htmlFor={ids.search}>
          <span>Search</span>
          <input id={ids.search} className="input w-full min-w-0" type="search" value={q} placeholder="Name, e-mail or words" onChange={(e) => setQ(e.target.value)} maxLength={200} />
        </label>
        <label className="field min-w-0" htmlFor={ids.actor}>
          <span>Person who acted</span>
          <select id={ids.actor} className="input w-full min-w-0" value={actor} onChange={(e) => { setActor(e.target.value); setPage(1); }}>
            <option value="">Anyone</option>
            {facets.actors.map((a) => (
              <option key={a.id} value={a.id}>{a.name} ({a.email})</option>
            ))}
          </select>
        </label>
        <label className="field min-w-0" htmlFor={ids.kind}>
          <span>Kind</span>
          <select id={ids.kind} className="input w-full min-w-0" value={kind} onChange={(e) => { setKind(e.target.value); setPage(1); }}>
            <option value="">Any kind</option>
            {facets.kinds.map((k) => (
              <option key={k} value={k}>{auditKindWords(k)}</option>
            ))}
          </select>
        </label>
        <label className="field min-w-0" htmlFor={ids.from}>
          <span>From (day)</span>
          <input id={ids.from} className="input w-full min-w-0" type="date" value={from} onChange={(e) => { setFrom(e.target.value); setPage(1); }} />
        </label>
        <label className="field min-w-0" htmlFor={ids.to}>
          <span>To (day, included)</span>
          <input id={ids.to} className="input w-full min-w-0" type="date" value={to} onChange={(e) => { setTo(e.target.value); setPage(1); }} />
        </label>
        <div className="flex flex-wrap items-center gap-3 sm:col-span-2 lg:col-span-6">
          <button type="button" className="btn btn-quiet" onClick={clear}>Clear filters</button>
          <a className="btn btn-quiet" href={csvHref} download>Download CSV</a>
          <span className="hint min-w-0">Days and times are in the site’s time zone, {timeZone}.</span>
        </div>
      </form>
      <p aria-live="polite" className={problem ? 'notice notice-stop' : 'sr-only'}>{problem ?? ''}</p>
      <div className="card overflow-x-auto">
        <table className="table" aria-busy={loading}>
          <caption className="sr-only">Audit log, {sort === 'at' ? 'by time' : `by ${sort}`}</caption>
          <thead>
            <tr>
              <th aria-sort={ariaSort('at')}><button type="button" className="font-semibold" onClick={() => sortBy('at')}>When{sortMark('at')}</button></th>
              <th className="hidden md:table-cell" aria-sort={ariaSort('actor')}><button type="button" className="font-semibold" onClick={() => sortBy('actor')}>Who{sortMark('actor')}</button></th>
              <th className="hidden md:table-cell" aria-sort={ariaSort('kind')}><button type="button" className="font-semibold" onClick={() => sortBy('kind')}>Kind{sortMark('kind')}</button></th>
              <th>What changed</th>
            </tr>
          </thead>
          <tbody>
            {data?.rows.map((r) => (
              <tr key={r.id} data-audit-kind={r.kind}>
                <td className="whitespace-nowrap text-sm">
                  <time dateTime={r.at}>{when.format(new Date(r.at))}</time>
                  <span className="block text-charcoal-soft md:hidden">{r.actorName ?? 'System'}</span>
                  <span className="block text-xs text-charcoal-soft md:hidden">{auditKindWords(r.kind)}</span>
                </td>
                <td className="hidden text-sm md:table-cell">{r.actorName ?? <span className="text-charcoal-soft">System</span>}</td>
                <td className="hidden text-sm md:table-cell">{auditKindWords(r.kind)}</td>
                <td className="text-sm">
                  <span className="break-words">{withSiteDates(r.summary, when.format)}</span>
                  {(r.before !== null || r.after !== null) && (
                    <>
                      {' '}
                      <button type="button" className="text-ember-dark underline" aria-expanded={open === r.id} onClick={() => setOpen(open === r.id ? null : r.id)}>
                        {open === r.id ? 'Hide details' : 'Details'}
                      </button>
                      {open === r.id && (
                        <div className="mt-2 grid gap-2 rounded-md bg-paper-deep p-2 text-xs sm:grid-cols-2">
                          {(['before', 'after'] as const).map((side) => (
                            <div key={side}>
                              <p className="font-semibold">{side === 'before' ? 'Before' : 'After'}</p>
                              {auditDetailLines(r[side]).length === 0 ? (
                                <p>—</p>
                              ) : (
                                <dl className="grid gap-0.5">
                                  {auditDetailLines(r[side]).map((l, i) => (
                                    <div key={i} className="flex flex-wrap gap-x-1">
                                      <dt>{l.label}:</dt>
                                      <dd className="break-all font-medium">{withSiteDates(l.value, when.format)}</dd>
                                    </div>
                                  ))}
                                </dl>
                              )}
                            </div>
                          ))}
                        </div>
                      )}
                    </>
                  )}
                </td>
              </tr>
            ))}
            {data && data.rows.length === 0 && (
              <tr><td colSpan={4} className="text-center text-charcoal-soft">Nothing in the log matches these filters.</td></tr>
            )}
          </tbody>
        </table>
      </div>
      <Pager total={data ? data.total : null} noun={['entry', 'entries']} page={page} pages={pages} onPage={setPage} />
    </div>
  );
}
