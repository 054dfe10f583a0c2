import Link from 'next/link';
import type { ReactNode } from 'react';

/** An empty list that teaches: what the area is for, and the one action that fills it. */
export function EmptyState({ title, children, action }: { title: string; children: ReactNode; action?: { href: string; label: string } }) {
  return (
    <div className="card flex flex-col items-start gap-3 border-dashed py-8">
      <h2 className="text-xl">{title}</h2>
      <div className="max-w-2xl text-ink-700">{children}</div>
      {action && (
        <Link href={action.href} className="btn-primary no-underline">
          {action.label}
        </Link>
      )}
    </div>
  );
}
