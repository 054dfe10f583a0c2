'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import type { VisitView } from '@/lib/services/visits';
import { MISSED_REASONS, MISSED_REASON_LABELS, VISIT_STATUS_LABELS, type MissedReason, type VisitStatus } from '@/lib/recall/status';

/**
 * Moves a visit to one of the statuses its rules allow now (lib/recall allowedMoves: attended and
 * missed only once the appointment or window has begun). "Missed" asks why; a "missed" recorded
 * today can be undone.
 */
export function VisitActions({ visit }: { visit: VisitView }) {
  const router = useRouter();
  const [to, setTo] = useState<VisitStatus | ''>('');
  const [reason, setReason] = useState<MissedReason | ''>('');
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  const id = `visit-move-${visit.id}`;
  const send = async (body: Record<string, unknown>) => {
    setBusy(true);
    setError(null);
    const res = await fetch(`/api/visits/${visit.id}`, { method: 'PATCH', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(body) });
    setBusy(false);
    if (!res.ok) {
      setError(((await res.json().catch(() => ({}))) as { message?: string }).message ?? 'The visit could not be changed.');
      return;
    }
    setTo('');
    setReason('');
    router.refresh();
  };
  const needsReason = to === 'missed';
  return (
    <div className="flex flex-wrap items-center gap-2">
      {visit.allowedNext.length > 0 && (
        <>
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
          {needsReason && (
            <>
              <label htmlFor={`${id}-reason`} className="sr-only">
                Why was the {visit.milestone}-month visit missed?
              </label>
              <select id={`${id}-reason`} className="field-input w-auto py-1 text-sm" value={reason} onChange={(e) => setReason(e.target.value as MissedReason)}>
                <option value="">Why missed…</option>
                {MISSED_REASONS.map((r) => (
                  <option key={r} value={r}>
                    {MISSED_REASON_LABELS[r]}
                  </option>
                ))}
              </select>
            </>
          )}
          <button
            type="button"
            className="btn-secondary min-h-0 py-1"
            onClick={() => send({ status: to, ...(needsReason ? { missedReason: reason } : {}) })}
            disabled={!to || (needsReason && !reason) || busy}
          >
            Save
          </button>
        </>
      )}
      {visit.canUndoMissed && (
        <button type="button" className="btn-secondary min-h-0 py-1" onClick={() => send({ undoMissed: true })} disabled={busy}>
          Undo “missed”
        </button>
      )}
      {error && (
        <p className="field-error w-full" role="alert">
          {error}
        </p>
      )}
    </div>
  );
}
