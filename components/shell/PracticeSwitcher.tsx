'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import { switchPractice } from './practice';

/**
 * The practice switcher in the shell, shown to people who work in several practices. Switching
 * goes to the home page and reloads it from the server, so nothing of the previous practice stays on screen.
 */
export function PracticeSwitcher({ current, practices }: { current: string; practices: { id: string; name: string }[] }) {
  const router = useRouter();
  const [busy, setBusy] = useState(false);
  const [error, setError] = useState<string | null>(null);
  return (
    <div className="text-sm">
      <label className="sr-only" htmlFor="practice-switcher">
        Practice
      </label>
      <select
        id="practice-switcher"
        className="max-w-[14rem] rounded border border-bone-300 bg-white px-2 py-1"
        value={current}
        disabled={busy}
        onChange={async (e) => {
          setBusy(true);
          setError(null);
          if (await switchPractice(e.target.value)) {
            router.push('/');
            router.refresh();
            setBusy(false);
          }
          else {
            setError('That practice could not be chosen.');
            setBusy(false);
          }
        }}
      >
        {practices.map((p) => (
          <option key={p.id} value={p.id}>
            {p.name}
          </option>
        ))}
      </select>
      {error && (
        <p role="alert" className="mt-1 text-state-alert">
          ! {error}
        </p>
      )}
    </div>
  );
}
