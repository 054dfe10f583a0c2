import 'server-only';
import { requestEm } from '@/lib/db';
import { env } from '@/lib/env';
import { deriveCaseFacts } from '@/lib/outcomes';
import { rowFacts } from '@/lib/outcomes/facts';
import { cachedOutcomeCases, startOutcomesWarmer } from './outcomes-cache';
import { OUTCOME_READER } from './outcomes';
import { knexOf, practiceSettings } from './registry-common';

/**
 * Warming the outcomes area in the web server (issue 12, speed), started once by instrumentation.ts:
 *
 * - at start, the rows of the practices with the most completed cases (as many as the cache keeps)
 *   are read in the background, and what lib/outcomes derives per case (`deriveCaseFacts`: outcomes at
 *   the milestones, after a year and the current one, healing and tooth-loss intervals) is computed
 *   once, then laid out as columns (`rowFacts`, lib/outcomes/facts.ts), so the first user does not
 *   wait for the cold read nor a view's first request for them;
 * - then every OUTCOMES_WARM_MS the cached practices' data versions are compared with the
 *   database's; a practice whose data changed (a write here, in another instance, the worker, an
 *   import) has its rows refreshed (incrementally: lib/services/outcomes-cache.ts) and its recently
 *   asked views computed again, before anyone asks; while entries are being saved, at most about
 *   twice per OUTCOMES_MAX_LAG_MS (the lag the requests accept).
 *
 * Nothing here answers a request or writes anything; failures are logged (no health data) and retried
 * at the next tick.
 */
const g = globalThis as unknown as { __laminaOutcomesWarmer?: () => void };

export function startOutcomesWarming(): void {
  if (g.__laminaOutcomesWarmer || env.OUTCOMES_WARM_MS === 0) return;
  const onError = (e: unknown) => console.error('[outcomes] warming failed:', e instanceof Error ? e.message : e);
  g.__laminaOutcomesWarmer = startOutcomesWarmer(requestEm, OUTCOME_READER, env.OUTCOMES_WARM_MS, onError, env.OUTCOMES_MAX_LAG_MS);
  void warmAtStart().catch(onError);
}

/** The largest practices' rows, read and derived once (at most 4: what the cache keeps). */
export async function warmAtStart(): Promise<string[]> {
  const em = await requestEm();
  const practices = (await knexOf(em)('treatment_case')
    .select('practice_id')
    .whereNotNull('completion_date')
    .whereNull('archived_at')
    .groupBy('practice_id')
    .orderByRaw('count(*) desc')
    .limit(4)) as { practice_id: string }[];
  for (const { practice_id: id } of practices) {
    const { rows } = await cachedOutcomeCases(await requestEm(), id, OUTCOME_READER);
    const { minObservationDays: minObs } = await practiceSettings(em, id);
    // what lib/outcomes memoises per case object (kept with the rows), in slices so requests are not held up
    for (let i = 0; i < rows.length; i += 2000) {
      for (const c of rows.slice(i, i + 2000)) deriveCaseFacts(c, rows, minObs);
      await new Promise((r) => setImmediate(r));
    }
    // the same facts as columns per rows array (what the views read; a pass over the memos above)
    rowFacts(rows, minObs);
  }
  return practices.map((p) => p.practice_id);
}
