import { requireActor } from '@/lib/auth/session';

/** Reader agreement is the lead's: asked here, before anything streams (403 from the first byte). */
export default async function AgreementLayout({ children }: { children: React.ReactNode }) {
  await requireActor('reading.lead', '/outcomes/agreement');
  return children;
}
