import Link from 'next/link';
import type { Metadata } from 'next';
import { requireActor } from '@/lib/auth/session';
import { ROLE_LABELS, type Role } from '@/lib/auth/roles';
import { navFor } from '@/components/shell/nav';

export const metadata: Metadata = { title: 'Home' };

/** What each role comes to Lamina to do, in Lamina's own words. */
const ROLE_WORK: Record<Role, string> = {
  admin: 'Invite the team, set each person’s roles and read the audit trail of who saw and changed what.',
  coordinator: 'Keep every recall from being lost: who is due, who was invited, who replied, who is slipping away.',
  clinician: 'Record completed treatments, then score each follow-up film and note the clinical findings.',
  auditor: 'Audit the practice’s healing rates and tooth survival by clinician, treatment and case factor.',
  researcher: 'Export anonymised cohorts of consenting patients for analysis.',
};

export default async function HomePage() {
  const { actor } = await requireActor();
  const areas = navFor(actor.roles);
  return (
    <div className="space-y-8">
      <section>
        <h1 className="text-3xl">Good to see you, {actor.name?.split(' ')[0] ?? actor.email}</h1>
        <p className="mt-2 max-w-3xl text-ink-700">
          Lamina follows each completed root canal treatment until its follow-up films show whether the bone
          around the root tip has healed, and keeps the practice’s record of what worked.
        </p>
      </section>
      <section aria-labelledby="your-work" className="grid gap-4 md:grid-cols-2">
        <h2 id="your-work" className="sr-only">
          Your work
        </h2>
        {actor.roles.map((role) => (
          <div key={role} className="card">
            <h3 className="text-lg">{ROLE_LABELS[role]}</h3>
            <p className="mt-1 text-sm text-ink-700">{ROLE_WORK[role]}</p>
          </div>
        ))}
      </section>
      {areas.length === 0 && (
        <p className="card text-ink-700">
          None of your roles opens a working area in this version of Lamina. If you need to work with cases or the recall desk, ask your
          practice administrator for the matching role.
        </p>
      )}
      {areas.length > 0 && (
        <section aria-labelledby="areas">
          <h2 id="areas" className="text-xl">
            Your areas
          </h2>
          <ul className="mt-3 grid gap-3 md:grid-cols-3">
            {areas.map((a) => (
              <li key={a.href}>
                <Link href={a.href} className="card block no-underline hover:border-dura-300">
                  <span className="font-semibold text-dura-700">{a.label}</span>
                  <span className="mt-1 block text-sm text-ink-700">{a.description}</span>
                </Link>
              </li>
            ))}
          </ul>
        </section>
      )}
    </div>
  );
}
