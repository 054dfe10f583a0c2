/**
 * A correction of a saved review: the findings again in full (lib/schemas/review ReviewCreateSchema)
 * plus why. The earlier version is kept and shown as superseded (lib/services/reviews correctReview).
 */
import { z } from 'zod';

export const ReviewCorrectionReason = z.object({
  reason: z
    .string({ error: 'Say why the review is corrected.' })
    .trim()
    .min(3, 'Say why the review is corrected (a few words).')
    .max(500, 'At most 500 characters.'),
});
