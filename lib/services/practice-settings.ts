import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import { PracticeSchema } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { PracticeSettingsPatch } from '@/lib/schemas/practice-settings';
import type { RecallPolicy } from '@/lib/schemas/recall-policy';
import type { ToothNotation } from '@/lib/teeth';
import { audit } from './audit';
import { parseInput } from './parse';
import { recallPolicyOf } from './registry-common';

export interface PracticeSettingsView {
  name: string;
  toothNotation: ToothNotation;
  timeZone: string;
  recallPolicy: RecallPolicy;
  /** Days before which an unchanged lesion is "uncertain" (lib/scoring assessReview). */
  minObservationDays: number;
}

/** The practice's settings as the administrator's settings page shows them. */
export async function getPracticeSettings(em: EntityManager, actor: Actor): Promise<PracticeSettingsView> {
  assertCan(actor, 'team.read');
  const practice = await em.findOneOrFail(PracticeSchema, actor.practiceId);
  return {
    name: practice.name,
    toothNotation: practice.toothNotation as ToothNotation,
    timeZone: practice.timeZone,
    recallPolicy: recallPolicyOf(practice.recallPolicy),
    minObservationDays: practice.minObservationDays,
  };
}

/**
 * Changes the tooth notation, the recall policy and/or the minimum observation time. A new recall
 * policy applies to cases completed from now on (and to visits moved by a changed completion date);
 * existing plans stay. A new minimum observation time applies to reviews recorded or reassessed
 * from now on; stored outcomes stay as they were scored.
 */
export async function updatePracticeSettings(em: EntityManager, actor: Actor, raw: unknown): Promise<PracticeSettingsView> {
  assertCan(actor, 'team.manage');
  const patch = parseInput(PracticeSettingsPatch, raw);
  const practice = await em.findOneOrFail(PracticeSchema, actor.practiceId);
  const before = {
    toothNotation: practice.toothNotation,
    recallMonths: practice.recallPolicy.milestones.map((m) => m.months),
    minObservationDays: practice.minObservationDays,
  };
  if (patch.toothNotation) practice.toothNotation = patch.toothNotation;
  if (patch.recallPolicy) practice.recallPolicy = patch.recallPolicy;
  if (patch.minObservationDays !== undefined) practice.minObservationDays = patch.minObservationDays;
  await em.flush();
  await audit(em, actor, {
    action: 'practice.settings_changed',
    entityType: 'practice',
    entityId: practice.id,
    detail: {
      before: JSON.stringify(before),
      after: JSON.stringify({
        toothNotation: practice.toothNotation,
        recallMonths: practice.recallPolicy.milestones.map((m) => m.months),
        minObservationDays: practice.minObservationDays,
      }),
    },
  });
  return getPracticeSettings(em, actor);
}
