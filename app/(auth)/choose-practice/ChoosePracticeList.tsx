'use client';
import { useState } from 'react';
import { Notice } from '@/components/ui/Notice';
import { switchPractice } from '@/components/shell/practice';

export function ChoosePracticeList({
  practices,
  current,
  callbackUrl,
}: {
  practices: { id: string; name: string }[];
  current: string | null;
  callbackUrl: string;
}) {
  const [busy, setBusy] = useState<string | null>(null);
  const [error, setError] = useState<string | null>(null);
  return (
    <div className="space-y-2">
      {error && <Notice tone="alert">{error}</Notice>}
      <ul className="space-y-2">
        {practices.map((p) => (
          <li key={p.id}>
            <button
              type="button"
              className={`${p.id === current ? 'btn-primary' : 'btn-secondary'} w-full text-left`}
              disabled={busy !== null}
              onClick={async () => {
                setBusy(p.id);
                setError(null);
                if (await switchPractice(p.id)) window.location.assign(callbackUrl);
                else {
                  setError(`${p.name} could not be chosen. Sign in again and retry.`);
                  setBusy(null);
                }
              }}
            >
              {busy === p.id ? `Opening ${p.name}…` : `Work in ${p.name}`}
            </button>
          </li>
        ))}
      </ul>
    </div>
  );
}
