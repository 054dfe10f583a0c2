import { requireActor } from '@/lib/auth/session';

/** The recall desk is the coordinator's; the permission is asked before anything streams. */
export default async function DeskLayout({ children }: { children: React.ReactNode }) {
  await requireActor('recall.manage', '/desk');
  return children;
}
