import { requireActor } from '@/lib/auth/session';

/** The audit trail asks its permission before its loading state streams (a real 403 from the first byte). */
export default async function AuditLayout({ children }: { children: React.ReactNode }) {
  await requireActor('audit.read', '/team/audit');
  return children;
}
