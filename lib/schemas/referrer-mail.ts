import { z } from 'zod';
import { UPLOAD_LINK_DEFAULT_DAYS, UPLOAD_LINK_MAX_DAYS } from '@/lib/referrers/upload-token';

const Id = (what: string) => z.string({ error: `Choose the ${what}.` }).trim().uuid(`Choose the ${what}.`);

/** POST /api/cases/:id/referrer-links: an upload link for one visit of the case. */
export const UploadLinkRequest = z.strictObject({
  visitId: Id('recall visit'),
  days: z
    .number({ error: 'The link’s validity is a number of days.' })
    .int('Whole days, please.')
    .min(1, 'A link is valid for at least a day.')
    .max(UPLOAD_LINK_MAX_DAYS, `A link is valid for at most ${UPLOAD_LINK_MAX_DAYS} days.`)
    .default(UPLOAD_LINK_DEFAULT_DAYS),
});
export type UploadLinkRequest = z.output<typeof UploadLinkRequest>;

/** The public upload's token, from the URL. */
export const UploadTokenParams = z.object({ token: z.string().max(200) });
