'use client';

import { useState } from 'react';
import { useRouter } from 'next/navigation';

/** Puts a film in (pai) or out of (null) the reference set. */
export function ReferenceButton({ filmId, pai, label }: { filmId: string; pai: number | null; label: string }) {
  const router = useRouter();
  const [problem, setProblem] = useState<string | null>(null);
  return (
    <>
      <button
        type="button"
        className="btn-secondary text-xs"
        onClick={async () => {
          const res = await fetch(`/api/reading/reference/${filmId}`, { method: 'PUT', headers: { 'Content-Type': 'application/json' }, body: JSON.stringify({ pai }) });
          if (!res.ok) setProblem(((await res.json().catch(() => null)) as { message?: string } | null)?.message ?? 'Not saved.');
          else router.refresh();
        }}
      >
        {label}
      </button>
      {problem && <span className="field-error">{problem}</span>}
    </>
  );
}
