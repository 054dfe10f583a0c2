import { requireActor } from '@/lib/auth/session';

/** Recording a case needs case.write: asked here, before anything streams, so a role without it gets HTTP 403 (app/(app)/cases/layout.tsx). */
export default async function NewCaseLayout({ children }: { children: React.ReactNode }) {
  await requireActor('case.write', '/cases/new');
  return children;
}
