'use client';
import { useEffect, useRef, useState } from 'react';
import { useMutation, useQuery, useQueryClient } from '@tanstack/react-query';
import type { ContactLogView } from '@/lib/services/recall-contact';
import { Notice } from '@/components/ui/Notice';
import { VisitStatusBadge } from '@/components/ui/StateBadge';
import { Check } from '@/components/ui/Check';
import { fmtDate, fmtDateTime } from '@/components/ui/format';
import { getJson, postJson } from './api';

/** A visit's contact log beside the desk: messages, replies, calls; and a call note to add. */
export function ContactLog({ visitId, onClose }: { visitId: string; onClose: () => void }) {
  const qc = useQueryClient();
  const heading = useRef<HTMLHeadingElement>(null);
  const [note, setNote] = useState('');
  const [reached, setReached] = useState(false);
  const log = useQuery({ queryKey: ['desk-log', visitId], queryFn: () => getJson<ContactLogView>(`/api/recall/visits/${visitId}/contact-log`) });
  const add = useMutation({
    mutationFn: () => postJson<ContactLogView>(`/api/recall/visits/${visitId}/notes`, { note, reached }),
    onSuccess: (data) => {
      qc.setQueryData(['desk-log', visitId], data);
      qc.invalidateQueries({ queryKey: ['desk-rows'] });
      qc.invalidateQueries({ queryKey: ['desk-queues'] });
      setNote('');
      setReached(false);
    },
  });
  // Focus goes back to what opened the drawer (the row's "Contact log" button) when it closes,
  // by Escape or by its Close button. Declared before the heading's focus, so it sees the opener.
  const opener = useRef<HTMLElement | null>(null);
  useEffect(() => {
    opener.current = document.activeElement instanceof HTMLElement ? document.activeElement : null;
    return () => {
      if (opener.current?.isConnected) opener.current.focus();
    };
  }, []);
  useEffect(() => heading.current?.focus(), [visitId]);
  useEffect(() => {
    const onKey = (e: KeyboardEvent) => e.key === 'Escape' && onClose();
    window.addEventListener('keydown', onKey);
    return () => window.removeEventListener('keydown', onKey);
  }, [onClose]);
  const v = log.data?.visit;
  return (
    <aside aria-labelledby="contact-log-heading" className="fixed inset-y-0 right-0 z-20 w-full max-w-md overflow-y-auto border-l border-bone-300 bg-white p-5 shadow-card">
      <div className="flex items-start justify-between gap-3">
        <h2 id="contact-log-heading" ref={heading} tabIndex={-1} className="text-xl">
          Contact log
        </h2>
        <button type="button" className="btn-secondary" onClick={onClose}>
          Close
        </button>
      </div>
      {log.error && <Notice tone="alert">{(log.error as Error).message}</Notice>}
      {v && (
        <p className="mt-2 text-sm text-ink-700">
          {v.patient.name} · tooth {v.tooth} · {v.milestone}-month visit due {fmtDate(v.dueDate)} <VisitStatusBadge status={v.status} />
        </p>
      )}
      <ol className="mt-4 space-y-3">
        {log.data?.entries.length === 0 && <li className="text-sm text-ink-500">No contact yet.</li>}
        {log.data?.entries.map((e) => (
          <li key={e.id} className="rounded-md border border-bone-200 p-2 text-sm">
            <div className="text-xs text-ink-500">
              {fmtDateTime(e.at)} · {e.by === 'user' ? (e.user?.name ?? 'Practice') : e.by === 'patient' ? 'Patient' : 'Lamina'}
            </div>
            <div className="font-medium">{e.summary}</div>
            {e.note && <div className="whitespace-pre-wrap text-ink-700">{e.note}</div>}
            {e.reminder?.lastError && <div className="text-xs text-state-alert">Last error: {e.reminder.lastError}</div>}
          </li>
        ))}
      </ol>
      <form
        className="mt-5 space-y-3 border-t border-bone-200 pt-4"
        onSubmit={(e) => {
          e.preventDefault();
          if (!add.isPending) add.mutate();
        }}
      >
        <h3 className="text-lg">Note a call</h3>
        {add.error && <Notice tone="alert">{(add.error as Error).message}</Notice>}
        <div>
          <label htmlFor="call-note" className="field-label">
            What was said
          </label>
          <textarea id="call-note" className="field-input" rows={3} value={note} onChange={(e) => setNote(e.target.value)} />
        </div>
        <Check label="I spoke to the patient" checked={reached} onChange={(e) => setReached(e.target.checked)} />
        {/* aria-disabled, not disabled: a disabled button loses the keyboard focus while the note is saved */}
        <button type="submit" className="btn-primary aria-disabled:cursor-not-allowed aria-disabled:opacity-60" aria-disabled={add.isPending || undefined}>
          {add.isPending ? 'Saving…' : 'Add to the log'}
        </button>
      </form>
    </aside>
  );
}
