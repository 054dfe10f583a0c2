'use client';
import { useActionState, useState } from 'react';
import { Notice } from '@/components/ui/Notice';
import { answerReplyAction } from './actions';

type Answer = 'confirmed' | 'another_time' | 'declined';

export function ReplyForm({ token, initial, hasAppointment }: { token: string; initial: Answer | null; hasAppointment: boolean }) {
  const [state, formAction, pending] = useActionState(answerReplyAction, null);
  const [answer, setAnswer] = useState<Answer | null>(initial);
  const [note, setNote] = useState('');
  if (state?.ok) return <Notice tone="ok">{state.message}</Notice>;
  if (state && !state.ok && state.refused) return <Notice tone="alert">{state.message}</Notice>;
  const errors = state && !state.ok ? (state.fieldErrors ?? {}) : {};
  const choices: { value: Answer; label: string; hint: string }[] = [
    {
      value: 'confirmed',
      label: hasAppointment ? 'Yes, this time suits me' : 'Yes, I would like to come',
      hint: hasAppointment ? 'The practice keeps the time for you.' : 'The practice will arrange the appointment with you.',
    },
    { value: 'another_time', label: 'Please offer me another time', hint: 'Tell the practice what suits you below.' },
    { value: 'declined', label: 'No further follow-up, thank you', hint: 'The practice will stop inviting you for this treatment.' },
  ];
  return (
    <form action={formAction} className="space-y-4" noValidate>
      {state && !state.ok && <Notice tone="alert">{state.message}</Notice>}
      <input type="hidden" name="token" value={token} />
      <fieldset className="space-y-2">
        <legend className="field-label">Your answer</legend>
        {choices.map((c) => (
          <label key={c.value} className="flex cursor-pointer gap-3 rounded-md border border-bone-300 p-3 has-[:checked]:border-dura-500 has-[:checked]:bg-bone-50">
            <input type="radio" name="answer" value={c.value} checked={answer === c.value} onChange={() => setAnswer(c.value)} className="mt-1" required />
            <span>
              <span className="block font-medium">{c.label}</span>
              <span className="block text-sm text-ink-500">{c.hint}</span>
            </span>
          </label>
        ))}
        {errors.answer?.[0] && <p className="field-error">{errors.answer[0]}</p>}
      </fieldset>
      <div>
        <label htmlFor="reply-note" className="field-label">
          A note for the practice {answer === 'another_time' ? '(which days or times suit you)' : '(optional)'}
        </label>
        <textarea
          id="reply-note"
          name="note"
          rows={3}
          maxLength={1000}
          className="field-input"
          value={note}
          onChange={(e) => setNote(e.target.value)}
          aria-invalid={errors.note ? true : undefined}
          aria-describedby={errors.note ? 'reply-note-error' : undefined}
        />
        {errors.note?.[0] && (
          <p id="reply-note-error" className="field-error">
            {errors.note[0]}
          </p>
        )}
        <p className="mt-1 text-xs text-ink-500">Please do not write about symptoms here; call the practice if you are in pain.</p>
      </div>
      <button type="submit" className="btn-primary w-full" disabled={pending || !answer}>
        {pending ? 'Sending…' : 'Send my answer'}
      </button>
    </form>
  );
}
