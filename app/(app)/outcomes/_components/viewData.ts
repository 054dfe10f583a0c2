import type { Actor } from '@/lib/auth/actor';
import { ValidationError } from '@/lib/services/errors';
import { seesWholePractice } from '@/lib/services/outcomes';

/**
 * A view's report, or the field problems that stopped it (a ValidationError: the page shows them beside
 * its filters; anything else is thrown). `own` is the report's, or — with no report — the service's rule
 * (seesWholePractice), so the header still says whose cases the page is about.
 */
export async function viewData<T extends { own: boolean }>(actor: Actor, load: () => Promise<T>): Promise<{ data: T | null; problems: Record<string, string[]>; own: boolean }> {
  try {
    const data = await load();
    return { data, problems: {}, own: data.own };
  } catch (e) {
    if (!(e instanceof ValidationError)) throw e;
    return { data: null, problems: e.fieldErrors ?? {}, own: !seesWholePractice(actor) };
  }
}
