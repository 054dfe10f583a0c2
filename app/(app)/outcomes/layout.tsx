import { requireActor } from '@/lib/auth/session';

/** The outcomes area: the practice lead and the clinicians; the permission is asked before anything streams. */
export default async function OutcomesLayout({ children }: { children: React.ReactNode }) {
  await requireActor('outcomes.read', '/outcomes');
  return children;
}
