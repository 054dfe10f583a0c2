import 'server-only';
import { z } from 'zod';
import type { EntityManager } from '@mikro-orm/postgresql';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { followUpRate, type FollowUpRate, type RateVisit, type VisitStatus } from '@/lib/recall';
import { daysInMonth } from '@/lib/registry/calendar-date';
import { audit } from './audit';
import { ValidationError } from './errors';
import { parseInput } from './parse';
import { activeVisits, recallSettings } from './recall-common';
import { knexOf, recallPolicyOf } from './registry-common';

/**
 * The practice's follow-up rate — attended ÷ due, by milestone and by month of the due date, each
 * with its n and Wilson 95% interval — for a period of due months (lib/recall/follow-up-rate.ts
 * says exactly what counts as due and attended). Archived patients and cases are left out.
 */

const Month = z.string().trim().regex(/^\d{4}-(0[1-9]|1[0-2])$/, 'A month is written YYYY-MM.');

export const FollowUpRateQuery = z.object({
  /** First month of due dates (default: 11 months before `to`). */
  from: z.preprocess((v) => (v === '' ? undefined : v), Month.optional()),
  /** Last month of due dates (default: the current month). */
  to: z.preprocess((v) => (v === '' ? undefined : v), Month.optional()),
  /** Open visits past their due date: counted as due (the definition) or left out. */
  pending: z.enum(['count_as_due', 'exclude'], { error: 'pending is count_as_due or exclude.' }).default('count_as_due'),
});

export interface FollowUpRateReport extends FollowUpRate {
  today: string;
  from: string;
  to: string;
  pending: 'count_as_due' | 'exclude';
}

function shiftMonth(month: string, by: number): string {
  const [y, m] = month.split('-').map(Number) as [number, number];
  const t = y * 12 + (m - 1) + by;
  return `${String(Math.floor(t / 12)).padStart(4, '0')}-${String((t % 12) + 1).padStart(2, '0')}`;
}

export async function followUpRateReport(em: EntityManager, actor: Actor, raw: unknown): Promise<FollowUpRateReport> {
  assertCan(actor, 'recall.manage');
  const q = parseInput(FollowUpRateQuery, raw ?? {});
  const s = await recallSettings(em, actor.practiceId);
  const to = q.to ?? s.today.slice(0, 7);
  const from = q.from ?? shiftMonth(to, -11);
  if (from > to) throw new ValidationError('Some fields need attention.', { from: ['The first month must not be after the last.'] });
  if (shiftMonth(from, 120) < to) throw new ValidationError('Some fields need attention.', { from: ['At most ten years at once.'] });
  const [ty, tm] = to.split('-').map(Number) as [number, number];
  const knex = knexOf(em);
  const [rows, practice] = await Promise.all([
    activeVisits(knex, actor.practiceId)
      .whereBetween('v.due_date', [`${from}-01`, `${to}-${String(daysInMonth(ty, tm)).padStart(2, '0')}`])
      .select('v.status', 'v.due_date', 'v.milestone') as Promise<{ status: VisitStatus; due_date: string; milestone: number }[]>,
    knex('practice').where({ id: actor.practiceId }).first('recall_policy') as Promise<{ recall_policy: unknown }>,
  ]);
  const visits: RateVisit[] = rows.map((r) => ({ status: r.status, dueDate: r.due_date, milestone: Number(r.milestone) }));
  const rate = followUpRate(visits, s.today, {
    pending: q.pending,
    milestones: recallPolicyOf(practice?.recall_policy).milestones.map((m) => m.months),
    months: { from, to },
  });
  await audit(em, actor, { action: 'recall.rate_read', detail: { from, to, pending: q.pending } });
  return { ...rate, today: s.today, from, to, pending: q.pending };
}
