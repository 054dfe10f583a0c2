'use client';
import { useState } from 'react';

/**
 * Writing to the case's referring dentist (issue 13): "Ask the referrer for the film" on a recall
 * visit (POST /api/cases/:id/referrer-links) and "Send the outcome letter" on a review
 * (POST /api/reviews/:id/letter). Both go out by e-mail through the queue, once.
 */
export function ReferrerAction({ url, body, label, doneLabel }: { url: string; body?: Record<string, unknown>; label: string; doneLabel: string }) {
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ ok: boolean; text: string } | null>(null);
  const send = async () => {
    setBusy(true);
    setMessage(null);
    try {
      const res = await fetch(url, { method: 'POST', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(body ?? {}) });
      const json = (await res.json().catch(() => ({}))) as { message?: string; to?: string; created?: boolean };
      if (!res.ok) setMessage({ ok: false, text: json.message ?? 'It could not be sent.' });
      else if (json.created === false) setMessage({ ok: true, text: 'Already sent: it goes out only once.' });
      else setMessage({ ok: true, text: `${doneLabel}${json.to ? ` to ${json.to}` : ''}.` });
    } catch {
      setMessage({ ok: false, text: 'No connection: nothing was sent.' });
    } finally {
      setBusy(false);
    }
  };
  return (
    <div className="mt-1">
      <button type="button" className="btn-secondary min-h-0 py-1 text-sm" onClick={send} disabled={busy || Boolean(message?.ok)}>
        {busy ? 'Sending…' : label}
      </button>
      {message && (
        <p className={`text-xs ${message.ok ? 'text-ink-700' : 'field-error'}`} role={message.ok ? 'status' : 'alert'}>
          {message.ok ? '✓ ' : '⚠ '}
          {message.text}
        </p>
      )}
    </div>
  );
}
