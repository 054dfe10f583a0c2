import { requireActor } from '@/lib/auth/session';

/** Importing cases needs case.import: asked here, before anything streams, so a role without it gets HTTP 403 (app/(app)/cases/layout.tsx). */
export default async function ImportCasesLayout({ children }: { children: React.ReactNode }) {
  await requireActor('case.import', '/cases/import');
  return children;
}
