'use client';
import { useState } from 'react';
import { Field } from '@/components/ui/Field';

type Result = { message?: string; to?: string; created?: boolean; fieldErrors?: Record<string, string[]> };

/**
 * Writing to the case's referring dentist (issue 13): "Ask the referrer for the film" on a recall
 * visit (POST /api/cases/:id/referrer-links) and "Send the outcome letter" on a review
 * (POST /api/reviews/:id/letter). Both go out by e-mail through the queue, once. When the referrer
 * has no e-mail address yet, the answer (422) opens a field to add it to the referrer
 * (PATCH /api/referrers/:id) and send in one go.
 */
export function ReferrerAction({
  url,
  body,
  label,
  doneLabel,
  referrer,
}: {
  url: string;
  body?: Record<string, unknown>;
  label: string;
  doneLabel: string;
  referrer?: { id: string; name: string };
}) {
  const [busy, setBusy] = useState(false);
  const [message, setMessage] = useState<{ ok: boolean; text: string } | null>(null);
  const [askAddress, setAskAddress] = useState(false);
  const [email, setEmail] = useState('');
  const [emailError, setEmailError] = useState<string | null>(null);

  const post = async (target: string, method: 'POST' | 'PATCH', payload: unknown): Promise<{ res: Response; json: Result }> => {
    const res = await fetch(target, { method, headers: { 'Content-Type': 'application/json' }, body: JSON.stringify(payload ?? {}) });
    return { res, json: (await res.json().catch(() => ({}))) as Result };
  };

  const send = async () => {
    setBusy(true);
    setMessage(null);
    try {
      const { res, json } = await post(url, 'POST', body);
      if (res.status === 422 && referrer && json.fieldErrors?.referrer) {
        setAskAddress(true);
        setMessage({ ok: false, text: json.message ?? 'It could not be sent.' });
      } else if (!res.ok) setMessage({ ok: false, text: json.message ?? 'It could not be sent.' });
      else if (json.created === false) setMessage({ ok: true, text: 'Already sent: it goes out only once.' });
      else {
        setAskAddress(false);
        setMessage({ ok: true, text: `${doneLabel}${json.to ? ` to ${json.to}` : ''}.` });
      }
    } catch {
      setMessage({ ok: false, text: 'No connection: nothing was sent.' });
    } finally {
      setBusy(false);
    }
  };

  const saveAddressAndSend = async (e: React.FormEvent) => {
    e.preventDefault();
    if (!referrer) return;
    setBusy(true);
    setEmailError(null);
    try {
      const { res, json } = await post(`/api/referrers/${referrer.id}`, 'PATCH', { email });
      if (!res.ok) {
        setEmailError(json.fieldErrors?.email?.[0] ?? json.message ?? 'The address could not be saved.');
        return;
      }
    } catch {
      setEmailError('No connection: nothing was saved.');
      return;
    } finally {
      setBusy(false);
    }
    await send();
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
      {askAddress && referrer && (
        <form onSubmit={saveAddressAndSend} className="mt-2 space-y-1" aria-label={`Add ${referrer.name}’s e-mail`} noValidate>
          <Field label={`${referrer.name}’s e-mail`} type="email" autoComplete="off" value={email} onChange={(e) => setEmail(e.target.value)} error={emailError ?? undefined} />
          <button type="submit" className="btn-primary min-h-0 py-1 text-sm" disabled={busy}>
            Save the address and send
          </button>
        </form>
      )}
    </div>
  );
}
