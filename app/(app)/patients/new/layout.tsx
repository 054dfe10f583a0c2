import { requireActor } from '@/lib/auth/session';

/** Adding a patient needs patient.write: asked here, before anything streams, so a role without it gets HTTP 403 (app/(app)/cases/layout.tsx). */
export default async function NewPatientLayout({ children }: { children: React.ReactNode }) {
  await requireActor('patient.write', '/patients/new');
  return children;
}
