import 'server-only';
import { requestEm } from '@/lib/db';
import { env } from '@/lib/env';
import { deriveCaseFacts, type OutcomeCase } from '@/lib/outcomes';
import { rowFactsInSlices } from '@/lib/outcomes/facts';
import type { EntityManager } from '@mikro-orm/postgresql';
import type { Actor } from '@/lib/auth/actor';
import { renderOutcomesReport } from '@/lib/pdf/outcomes-report';
import { curvesReport, factorReport, OUTCOME_READER, overviewReport } from './outcomes';
import { cachedOutcomeCases, startOutcomesWarmer, yieldToRequests } from './outcomes-cache';
import { funnelReport } from './outcomes-funnel';
import { modelFigures } from './outcomes-model';
import { outcomesReportData } from './outcomes-report';
import { buildWorklist, openWorklistCsv } from './outcomes-worklist';
import { knexOf, practiceSettings } from './registry-common';

/**
 * Warming the outcomes area in the web server (issue 12, speed), started once by instrumentation.ts:
 *
 * - at start, the rows of the practices with the most completed cases (as many as the cache keeps)
 *   are read in the background, and what lib/outcomes derives per case (`deriveCaseFacts`: outcomes at
 *   the milestones, after a year and the current one, healing and tooth-loss intervals) is computed
 *   once, then laid out as columns (`rowFacts`, lib/outcomes/facts.ts), so the first user does not
 *   wait for the cold read nor a view's first request for them; then each view's practice-wide
 *   default is computed once (`warmViews`), kept for the lead and compiling every path the views take;
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
  g.__laminaOutcomesWarmer = startOutcomesWarmer(requestEm, OUTCOME_READER, env.OUTCOMES_WARM_MS, onError, env.OUTCOMES_MAX_LAG_MS, prepareRows);
  void warmAtStart().catch(onError);
}

/** The largest practices' rows, read and derived once (at most 4: what the cache keeps), and their practice-wide views computed. */
export async function warmAtStart(): Promise<string[]> {
  const em = await requestEm();
  const practices = (await knexOf(em)('treatment_case')
    .select('practice_id')
    .whereNotNull('completion_date')
    .whereNull('archived_at')
    .groupBy('practice_id')
    .orderByRaw('count(*) desc')
    .limit(4)) as { practice_id: string }[];
  for (const { practice_id: id } of practices) await warmPractice(requestEm, id);
  return practices.map((p) => p.practice_id);
}

/**
 * One practice at start: its rows read and what lib/outcomes derives per case computed, then every
 * outcomes view's practice-wide default computed once (`warmViews`). Also what the benchmark
 * (scripts/bench/outcomes.ts) runs before it times requests, as the web server has done by then.
 */
export async function warmPractice(getEm: () => Promise<EntityManager>, practiceId: string, o: { views?: boolean } = {}): Promise<void> {
  const em = await getEm();
  const { rows } = await cachedOutcomeCases(em, practiceId, OUTCOME_READER);
  const { minObservationDays: minObs } = await practiceSettings(em, practiceId);
  // what lib/outcomes memoises per case object (kept with the rows), in slices so requests are not held up
  for (let i = 0; i < rows.length; i += 2000) {
    for (const c of rows.slice(i, i + 2000)) deriveCaseFacts(c, rows, minObs);
    await yieldToRequests();
  }
  // the same facts as columns per rows array (what the views read; a pass over the memos above)
  await rowFactsInSlices(rows, minObs, yieldToRequests);
  if (o.views !== false) await warmViews(getEm, practiceId);
}

/**
 * New rows of a practice, before the warmer computes its views on them: their facts as columns,
 * built in slices with yields to requests (lib/outcomes/facts.ts rowFactsInSlices).
 */
export async function prepareRows(em: EntityManager, practiceId: string, rows: OutcomeCase[]): Promise<void> {
  const { minObservationDays } = await practiceSettings(em, practiceId);
  await rowFactsInSlices(rows, minObservationDays, yieldToRequests);
}

/**
 * Who the start computes the views as: a reader of the whole practice, as the practice lead sees it
 * (role auditor; no user, so no clinician's point is highlighted and no step can be recorded). It
 * never answers a request and is never audited: only the views' unaudited steps are called with it.
 */
export function practiceWideReader(practiceId: string): Actor {
  return { userId: '00000000-0000-0000-0000-000000000000', email: 'start@lamina.invalid', name: 'Lamina (start)', practiceId, practiceName: '', roles: ['auditor'], ip: null, userAgent: null };
}

/**
 * The practice-wide default of every outcomes view (what the lead first opens), computed through
 * the views' own unaudited steps, one at a time with a yield between them. Their figures are kept
 * for this data version (outcomes-cache.ts) and every code path they take (the engine, the models,
 * the report's drawing, the worklist's detail read and CSV writer) is compiled, so the first requests
 * after a start are not the slowest. The report and the CSV are made and dropped (the report's key
 * names its reader; the CSV is never kept).
 */
export async function warmViews(getEm: () => Promise<EntityManager>, practiceId: string): Promise<void> {
  const reader = practiceWideReader(practiceId);
  const steps: ((em: EntityManager) => Promise<unknown>)[] = [
    (em) => overviewReport(em, reader, {}),
    (em) => factorReport(em, reader, {}),
    (em) => curvesReport(em, reader, {}),
    (em) => modelFigures(em, reader, {}),
    (em) => funnelReport(em, reader, {}),
    (em) => buildWorklist(em, reader, {}),
    async (em) => {
      const { chunks } = await openWorklistCsv(em, reader, {}, async () => {});
      for await (const _ of chunks);
    },
    async (em) => renderOutcomesReport(await outcomesReportData(em, reader, {})),
  ];
  for (const step of steps) {
    await yieldToRequests();
    await step(await getEm());
  }
}
