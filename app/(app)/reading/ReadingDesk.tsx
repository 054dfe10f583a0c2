'use client';

import { useCallback, useEffect, useRef, useState, type RefObject } from 'react';
import { useRouter } from 'next/navigation';
import { ReadingFilm, type ReadingFilmProps } from '@/components/films/ReadingFilm';
import { useFocusAfterRender } from '@/components/ui/useFocusAfterRender';
import { EmptyState } from '@/components/ui/EmptyState';
import { Notice } from '@/components/ui/Notice';
import type { QueueItem } from '@/lib/services/readings';

/** Sign toggles by key (the first reader records clinical signs; blinded readers score the film alone). */
const SIGN_KEYS: Record<string, string> = {
  painOnBiting: 'b',
  tenderToPercussion: 't',
  tenderToPalpation: 'a',
  spontaneousPain: 'o',
  swelling: 'w',
  sinusTract: 'x',
  mobility: 'm',
};

type Film = Omit<ReadingFilmProps, 'src'> & { src: string };

/**
 * Keys typed into a text field or a list belong to it; on a checkbox or a button (where Tab and Space
 * leave a keyboard user) the reading shortcuts still work.
 */
function takesTyping(t: EventTarget | null): boolean {
  if (!(t instanceof HTMLElement)) return false;
  if (t.isContentEditable || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT') return true;
  return t.tagName === 'INPUT' && !['checkbox', 'radio', 'button', 'submit', 'reset', 'range', 'color', 'file', 'image'].includes((t as HTMLInputElement).type);
}

export function ReadingDesk({
  items: initial,
  scope,
  signs,
  start,
}: {
  items: QueueItem[];
  scope: 'mine' | 'practice';
  signs: { key: string; label: string }[];
  /** ?film=<id>: open that film first (a link from elsewhere). */
  start?: string;
}) {
  const router = useRouter();
  const [items, setItems] = useState(initial);
  const [index, setIndex] = useState(() => Math.max(0, initial.findIndex((i) => i.filmId === start)));
  const [message, setMessage] = useState<{ tone: 'ok' | 'alert'; text: string } | null>(null);
  const item = items[index] ?? null;
  // After "next" or a save the task on screen is replaced, and with it the control that had the
  // focus: the focus goes to the new task's heading (its position in the queue), or to the empty
  // queue's message, never back to the top of the page.
  const title = useRef<HTMLHeadingElement>(null);
  const empty = useRef<HTMLDivElement>(null);
  const focusTask = useFocusAfterRender(() => title.current ?? empty.current);
  const next = useCallback(() => {
    if (items.length > 1) focusTask();
    if (items.length > 0) setIndex((i) => (i + 1) % items.length);
  }, [items.length, focusTask]);
  const saved = useCallback(
    (done: QueueItem, text: string) => {
      focusTask();
      setMessage({ tone: 'ok', text });
      setItems((list) => list.filter((x) => x !== done));
      setIndex((i) => (items.length - 1 <= i ? 0 : i));
      router.refresh();
    },
    [items.length, router, focusTask],
  );

  if (!item) {
    return (
      <div ref={empty} tabIndex={-1} className="space-y-4">
        {message && <Notice tone={message.tone}>{message.text}</Notice>}
        <EmptyState
          title="No film is waiting for you"
          action={scope === 'mine' ? { href: '/reading?scope=practice', label: 'See the practice’s queue' } : { href: '/cases', label: 'Open a case to upload a follow-up film' }}
        >
          Follow-up films uploaded to your cases wait here for their first reading; films chosen for a blinded second reading, readings to
          adjudicate and the yearly calibration exercise come here too.
        </EmptyState>
      </div>
    );
  }
  return (
    <Task
      key={`${item.filmId}-${item.task}`}
      item={item}
      position={`${index + 1} of ${items.length}`}
      signs={signs}
      title={title}
      message={message}
      setMessage={setMessage}
      onNext={next}
      onSaved={saved}
    />
  );
}

function Task({
  item,
  position,
  signs,
  title,
  message,
  setMessage,
  onNext,
  onSaved,
}: {
  item: QueueItem;
  position: string;
  signs: { key: string; label: string }[];
  title: RefObject<HTMLHeadingElement | null>;
  message: { tone: 'ok' | 'alert'; text: string } | null;
  setMessage: (m: { tone: 'ok' | 'alert'; text: string } | null) => void;
  onNext: () => void;
  onSaved: (item: QueueItem, text: string) => void;
}) {
  const [pai, setPai] = useState<number | null>(null);
  const [present, setPresent] = useState<Record<string, boolean>>({});
  const [blinded, setBlinded] = useState<Film | null>(null);
  const [saving, setSaving] = useState(false);
  const first = item.task === 'first';
  const film: Film | null = item.film
    ? { filmId: item.film.id, src: item.film.imageUrl, width: item.film.width, height: item.film.height, calibration: item.film.calibration }
    : blinded;

  // a blinded task asks the blinded route: the film and its calibration, nothing else
  useEffect(() => {
    if (item.film) return;
    let live = true;
    fetch(`/api/reading/blinded/${item.filmId}`, { cache: 'no-store' })
      .then(async (r) => {
        if (!r.ok) throw new Error(((await r.json().catch(() => null)) as { message?: string } | null)?.message ?? 'The film could not be opened.');
        return r.json() as Promise<{ filmId: string; imageUrl: string; width: number; height: number; calibration: Film['calibration'] }>;
      })
      .then((b) => live && setBlinded({ filmId: b.filmId, src: b.imageUrl, width: b.width, height: b.height, calibration: b.calibration }))
      .catch((e: Error) => live && setMessage({ tone: 'alert', text: e.message }));
    return () => {
      live = false;
    };
  }, [item, setMessage]);

  const save = useCallback(async () => {
    if (saving) return;
    if (pai === null) {
      setMessage({ tone: 'alert', text: 'Score the film first: press 1–5.' });
      return;
    }
    setSaving(true);
    try {
      const res = await fetch(`/api/reading/films/${item.filmId}/readings`, {
        method: 'POST',
        headers: { 'Content-Type': 'application/json' },
        body: JSON.stringify({ kind: item.task, pai, signs: first ? present : {} }),
      });
      const body = (await res.json().catch(() => null)) as { message?: string; status?: string } | null;
      if (!res.ok) {
        setMessage({ tone: 'alert', text: body?.message ?? 'The reading was not saved. Try again.' });
        return;
      }
      const after =
        body?.status === 'awaiting-second' ? ' A second clinician will read this film blinded.' : body?.status === 'awaiting-adjudication' ? ' It goes to adjudication.' : '';
      onSaved(item, `Reading saved: PAI ${pai}.${after}`);
    } finally {
      setSaving(false);
    }
  }, [item, pai, present, first, saving, setMessage, onSaved]);

  useEffect(() => {
    const onKey = (e: KeyboardEvent) => {
      if (e.ctrlKey || e.metaKey || e.altKey || takesTyping(e.target)) return;
      if (/^[1-5]$/.test(e.key)) {
        setPai(Number(e.key));
        setMessage(null);
      } else if (e.key === 'n') onNext();
      else if (e.key === 's') void save();
      else if (first) {
        const sign = Object.entries(SIGN_KEYS).find(([, k]) => k === e.key)?.[0];
        if (sign) setPresent((p) => ({ ...p, [sign]: !p[sign] }));
      }
    };
    window.addEventListener('keydown', onKey);
    return () => window.removeEventListener('keydown', onKey);
  }, [onNext, save, first, setMessage]);

  return (
    <div className="grid gap-4 lg:grid-cols-[1fr_18rem]">
      <section aria-labelledby="reading-title" className="space-y-2">
        <h2 id="reading-title" ref={title} tabIndex={-1} className="text-xl">
          {item.taskLabel}
          <span className="ml-2 text-sm font-normal text-ink-500">{position}</span>
        </h2>
        {item.case && <p className="text-sm text-ink-700">Tooth {item.case.tooth}</p>}
        {item.scores && (
          <p className="text-sm text-ink-700">
            {item.consensus ? 'Consensus entry. ' : ''}The two readings: PAI {item.scores[0]} and PAI {item.scores[1]} (more than one step apart).
          </p>
        )}
        {film ? <ReadingFilm {...film} /> : <div className="h-64 animate-pulse rounded-lg bg-ink-900" aria-label="Loading the film" />}
      </section>
      <aside aria-label="Score" className="space-y-4">
        {message && <Notice tone={message.tone}>{message.text}</Notice>}
        <fieldset className="space-y-2">
          <legend className="field-label">Periapical index</legend>
          <div className="flex gap-2">
            {[1, 2, 3, 4, 5].map((s) => (
              <button
                key={s}
                type="button"
                aria-pressed={pai === s}
                onClick={() => setPai(s)}
                className={`h-11 w-11 rounded-md border text-lg ${pai === s ? 'border-dura-700 bg-dura-700 font-semibold text-white' : 'border-bone-300 bg-white'}`}
              >
                {s}
              </button>
            ))}
          </div>
        </fieldset>
        {first && (
          <fieldset className="space-y-1">
            <legend className="field-label">Clinical signs</legend>
            {signs.map((s) => (
              <label key={s.key} className="flex items-center gap-2 text-sm">
                <input type="checkbox" checked={!!present[s.key]} onChange={() => setPresent((p) => ({ ...p, [s.key]: !p[s.key] }))} />
                {s.label} <kbd className="ml-auto rounded border border-bone-300 px-1 text-xs">{SIGN_KEYS[s.key]}</kbd>
              </label>
            ))}
          </fieldset>
        )}
        <div className="flex gap-2">
          <button type="button" className="btn-primary" onClick={() => void save()} disabled={saving}>
            Save reading
          </button>
          <button type="button" className="btn-secondary" onClick={onNext}>
            Next film
          </button>
        </div>
        <section aria-labelledby="keys-title" className="rounded-md border border-bone-200 bg-white p-3 text-sm">
          <h3 id="keys-title" className="font-semibold">
            Keyboard
          </h3>
          <ul className="mt-1 space-y-0.5">
            <li>
              <kbd>1</kbd>–<kbd>5</kbd> score the periapical index
            </li>
            {first && <li>letters beside each sign toggle it</li>}
            <li>
              <kbd>s</kbd> save the reading
            </li>
            <li>
              <kbd>n</kbd> next film
            </li>
          </ul>
        </section>
      </aside>
    </div>
  );
}
