import { requireActor } from '@/lib/auth/session';

/** See app/(app)/cases/layout.tsx: permissions are asked in layouts, outside any loading boundary. */
export default async function PatientsLayout({ children }: { children: React.ReactNode }) {
  await requireActor('patient.read', '/patients');
  return children;
}
