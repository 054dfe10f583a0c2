'use client';
import { useState } from 'react';
import { useRouter } from 'next/navigation';
import { submitJson } from '@/components/forms/submitJson';
import { Field } from '@/components/ui/Field';

/** Names a new cohort and opens its builder. */
export function NewCohortForm() {
  const router = useRouter();
  const [name, setName] = useState('');
  const [error, setError] = useState<string | null>(null);
  const [busy, setBusy] = useState(false);
  return (
    <form
      className="card flex flex-wrap items-end gap-3"
      onSubmit={async (e) => {
        e.preventDefault();
        setBusy(true);
        const r = await submitJson<{ id: string }>('/api/cohorts', 'POST', { name });
        setBusy(false);
        if (r.ok) router.push(`/cohorts/${r.data.id}`);
        else setError(r.fieldErrors.name?.[0] ?? r.message ?? 'The cohort could not be created.');
      }}
    >
      <div className="min-w-64 flex-1">
        <Field label="New cohort’s name" value={name} onChange={(e) => setName(e.target.value)} maxLength={120} required error={error ?? undefined} />
      </div>
      <button type="submit" className="btn-primary" disabled={busy}>
        Create cohort
      </button>
    </form>
  );
}
