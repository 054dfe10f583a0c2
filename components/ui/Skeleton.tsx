/** Placeholder bars of the same shape as the content that is loading. */
export function TableSkeleton({ rows = 8, columns = 6, label = 'Loading' }: { rows?: number; columns?: number; label?: string }) {
  return (
    <div role="status" aria-live="polite" className="overflow-hidden rounded-lg border border-bone-200 bg-white">
      <span className="sr-only">{label}…</span>
      <div className="grid gap-3 p-4" style={{ gridTemplateColumns: `repeat(${columns}, minmax(0, 1fr))` }}>
        {Array.from({ length: rows * columns }, (_, i) => (
          <div key={i} className="h-4 animate-pulse rounded bg-bone-200" />
        ))}
      </div>
    </div>
  );
}

export function BlockSkeleton({ lines = 4, label = 'Loading' }: { lines?: number; label?: string }) {
  return (
    <div role="status" aria-live="polite" className="card space-y-3">
      <span className="sr-only">{label}…</span>
      {Array.from({ length: lines }, (_, i) => (
        <div key={i} className="h-4 animate-pulse rounded bg-bone-200" style={{ width: `${90 - i * 12}%` }} />
      ))}
    </div>
  );
}
