import Link from 'next/link';

/** How many pages a list of `total` rows fills (at least one). */
export const pageCount = (total: number, pageSize: number) => Math.max(1, Math.ceil(total / pageSize));

/** Previous/next links that keep the rest of the query string (filters live in the URL). */
export function Pager({ page, pageSize, total, basePath, query }: { page: number; pageSize: number; total: number; basePath: string; query: Record<string, string | undefined> }) {
  const pages = pageCount(total, pageSize);
  const href = (p: number) => {
    const q = new URLSearchParams(Object.entries({ ...query, page: String(p) }).filter((e): e is [string, string] => Boolean(e[1])));
    return `${basePath}?${q.toString()}`;
  };
  return (
    <nav aria-label="Pages" className="flex items-center gap-3 text-sm">
      {page > 1 ? <Link href={href(page - 1)}>← Previous</Link> : <span className="text-ink-400">← Previous</span>}
      <span>
        Page {page} of {pages} · {total} in all
      </span>
      {page < pages ? <Link href={href(page + 1)}>Next →</Link> : <span className="text-ink-400">Next →</span>}
    </nav>
  );
}

/** Previous/next buttons, for lists a client component loads itself; `summary` follows "Page n of m". */
export function PagerButtons({ page, pages, onPage, summary }: { page: number; pages: number; onPage: (page: number) => void; summary?: string }) {
  return (
    <nav aria-label="Pages" className="flex items-center gap-3 text-sm">
      <button type="button" className="btn-secondary" disabled={page <= 1} onClick={() => onPage(page - 1)}>
        ← Previous
      </button>
      <span>
        Page {page} of {pages}
        {summary}
      </span>
      <button type="button" className="btn-secondary" disabled={page >= pages} onClick={() => onPage(page + 1)}>
        Next →
      </button>
    </nav>
  );
}
