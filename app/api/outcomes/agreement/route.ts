import { handler } from '@/lib/http';
import { readingAgreement } from '@/lib/services/readings';

/** GET /api/outcomes/agreement → weighted kappa per reader pair and the calibration exercise, for the lead. */
export const GET = handler('reading.lead', async ({ em, actor }) => readingAgreement(em, actor));
