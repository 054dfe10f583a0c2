'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import type { VisitView } from '@/lib/services/visits';
import { VISIT_STATUS_LABELS, type VisitStatus } from '@/lib/recall/status';

/** Moves a visit to one of the statuses its transition rules allow now. */
export function VisitActions({ visit }: { visit: VisitView }) {
  const router = useRouter();
  const [to, setTo] = useState<VisitStatus | ''>('');
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const id = `visit-move-${visit.id}`;
  const save = async () => {
    if (!to) return;
    setBusy(true);
    setError(null);
    const res = await fetch(`/api/visits/${visit.id}`, { method: 'PATCH', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify({ status: to }) });
    setBusy(false);
    if (!res.ok) {
      setError(((await res.json().catch(() => ({}))) as { message?: string }).message ?? 'The visit could not be changed.');
      return;
    }
    setTo('');
    router.refresh();
  };
  return (
    <div className="flex flex-wrap items-center gap-2">
      <label htmlFor={id} className="sr-only">
        Change the {visit.milestone}-month visit to
      </label>
      <select id={id} className="field-input w-auto py-1 text-sm" value={to} onChange={(e) => setTo(e.target.value as VisitStatus)}>
        <option value="">Change to…</option>
        {visit.allowedNext.map((s) => (
          <option key={s} value={s}>
            {VISIT_STATUS_LABELS[s]}
          </option>
        ))}
      </select>
      <button type="button" className="btn-secondary min-h-0 py-1" onClick={save} disabled={!to || busy}>
        Save
      </button>
      {error && (
        <p className="field-error w-full" role="alert">
          {error}
        </p>
      )}
    </div>
  );
}
