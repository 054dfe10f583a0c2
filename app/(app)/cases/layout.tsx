import { requireActor } from '@/lib/auth/session';

/**
 * The Cases area asks for its permission in the layout, outside the pages' loading boundary,
 * so a role without access gets a real 403 before anything streams.
 */
export default async function CasesLayout({ children }: { children: React.ReactNode }) {
  await requireActor('patient.read', '/cases');
  return children;
}
