/** The paging bar under every table island: a count of what matched, Previous / Page n of m / Next. */
export function Pager(props: { total: number | null; noun: [one: string, many: string]; page: number; pages: number; onPage: (page: number) => void }) {
  const { total, noun, page, pages, onPage } = props;
  return (
    <nav aria-label="Pages" className="flex flex-wrap items-center justify-between gap-3 text-sm">
      <span>{total === null ? 'Loading…' : `${total} ${total === 1 ? noun[0] : noun[1]}`}</span>
      <span className="flex items-center gap-2">
        <button type="button" className="btn btn-quiet" disabled={page <= 1} onClick={() => onPage(page - 1)}>Previous</button>
        <span>Page {page} of {pages}</span>
        <button type="button" className="btn btn-quiet" disabled={page >= pages} onClick={() => onPage(page + 1)}>Next</button>
      </span>
    </nav>
  );
}
