import Link from 'next/link';
import type { ReactNode } from 'react';

/** A patient in a work list: the name linking to their page, the registry number and any extra detail below. */
export function PatientCell({ id, name, registryNumber, extra }: { id: string; name: string; registryNumber: string; extra?: ReactNode }) {
  return (
    <div>
      <Link href={`/patients/${id}`} className="font-medium">
        {name}
      </Link>
      <div className="text-xs text-ink-500">
        {registryNumber}
        {extra}
      </div>
    </div>
  );
}
