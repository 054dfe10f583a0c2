import type { Metadata } from 'next';
import { headers } from 'next/headers';
import { requestEm } from '@/lib/db';
import { originFrom } from '@/lib/auth/origin';
import { NotFoundError } from '@/lib/services/errors';
import { openUploadLink, type PublicLinkView } from '@/lib/services/referrer-links';
import { Notice } from '@/components/ui/Notice';
import { fmtDateTime } from '@/components/ui/format';
import { UploadForm } from './UploadForm';

export const metadata: Metadata = { title: 'Send a follow-up film' };
export const dynamic = 'force-dynamic';

/**
 * A referring dentist's upload page (issue 13): the patient's initials, the tooth and the link's
 * expiry, nothing more; one upload of one or several films. Opening it changes nothing.
 */
export default async function ReferrerUploadPage({ params }: { params: Promise<{ token: string }> }) {
  const { token } = await params;
  let view: PublicLinkView | null = null;
  let problem: string | null = null;
  try {
    view = await openUploadLink(await requestEm(), token, originFrom(await headers()));
  } catch (e) {
    if (!(e instanceof NotFoundError)) throw e;
    problem = e.message;
  }
  return (
    <div className="space-y-4">
      <h1 className="text-2xl">Send a follow-up film</h1>
      {!view ? (
        <Notice tone="alert">{problem}</Notice>
      ) : (
        <>
          <p className="text-ink-700">{view.practiceName} asks for the follow-up radiograph of:</p>
          <dl className="grid grid-cols-2 gap-3 rounded-md bg-bone-100 p-3 text-sm" aria-label="The film asked for">
            <div>
              <dt className="text-ink-500">Patient</dt>
              <dd className="text-lg font-medium" data-testid="initials">
                {view.patientInitials}
              </dd>
            </div>
            <div>
              <dt className="text-ink-500">Tooth (FDI)</dt>
              <dd className="text-lg font-medium" data-testid="tooth">
                {view.tooth}
              </dd>
            </div>
            <div className="col-span-2">
              <dt className="text-ink-500">Link valid until</dt>
              <dd className="font-medium">{fmtDateTime(view.expiresAt)}</dd>
            </div>
          </dl>
          {view.state === 'open' ? (
            <UploadForm token={token} maxFiles={view.maxFiles} maxMb={Math.floor(view.maxBytes / 1024 / 1024)} />
          ) : (
            <Notice tone="alert">{view.message}</Notice>
          )}
        </>
      )}
    </div>
  );
}
