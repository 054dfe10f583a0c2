import { requireActor } from '@/lib/auth/session';

/**
 * The Cases area asks for its permission in the layout, and each page that needs more (new,
 * import, edit) asks in its own segment layout. No loading boundary sits above those layouts
 * (the list's skeleton lives in the (list) group), so a role without access gets a real 403
 * before anything streams.
 */
export default async function CasesLayout({ children }: { children: React.ReactNode }) {
  await requireActor('patient.read', '/cases');
  return children;
}
