import { requireActor } from '@/lib/auth/session';

/** The researcher's area (issue 14): anonymised cohorts; the permission is asked before anything streams. */
export default async function CohortsLayout({ children }: { children: React.ReactNode }) {
  await requireActor('cohort.export', '/cohorts');
  return children;
}
