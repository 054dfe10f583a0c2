import { handler } from '@/lib/http';
import { listClinicians } from '@/lib/services/cases';

/** GET /api/clinicians → { clinicians: { id, name, email }[] } (operator picker, list filter). */
export const GET = handler('patient.read', async ({ em, actor }) => ({ clinicians: await listClinicians(em, actor) }));
