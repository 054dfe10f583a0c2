import { requireActor } from '@/lib/auth/session';

/** The viewer needs film.read: asked here, before the loading state streams, so a role without it gets HTTP 403. */
export default async function FilmViewerLayout({ children }: { children: React.ReactNode }) {
  await requireActor('film.read', '/cases');
  return children;
}
