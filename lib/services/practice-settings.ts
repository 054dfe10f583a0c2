import 'server-only';
import type { EntityManager } from '@mikro-orm/postgresql';
import { PracticeSchema } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { PracticeSettingsPatch } from '@/lib/schemas/practice-settings';
import type { RecallPolicy } from '@/lib/schemas/recall-policy';
import type { ToothNotation } from '@/lib/teeth';
import { audit } from './audit';
import { parseInput } from './parse';
import { readWithSession, recallPolicyOf } from './registry-common';

export interface PracticeSettingsView {
  name: string;
  toothNotation: ToothNotation;
  timeZone: string;
  recallPolicy: RecallPolicy;
  /** Days before which an unchanged lesion is "uncertain" (lib/scoring assessReview). */
  minObservationDays: number;
  /** Share (%) of follow-up films read a second time, blinded, besides every "disease" (issue 13). */
  secondReadingPercent: number;
  /** Shown in every patient message and calendar file; null when not given. */
  contact: PracticeContact;
}

export interface PracticeContact {
  address: string | null;
  phone: string | null;
  contactEmail: string | null;
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
    secondReadingPercent: practice.secondReadingPercent,
    contact: { address: practice.address ?? null, phone: practice.phone ?? null, contactEmail: practice.contactEmail ?? null },
  };
}

/**
 * Changes the tooth notation, the recall policy, the minimum observation time and/or the
 * practice's contact details. A new recall policy applies to cases completed from now on (and to
 * visits moved by a changed completion date); existing plans stay. A new minimum observation time
 * applies to reviews recorded or reassessed from now on; stored outcomes stay as they were scored.
 * New contact details go into every message queued or sent from now on. Audited before and after.
 */
export async function updatePracticeSettings(em: EntityManager, actor: Actor, raw: unknown): Promise<PracticeSettingsView> {
  assertCan(actor, 'team.manage');
  const patch = parseInput(PracticeSettingsPatch, raw);
  const practice = await em.findOneOrFail(PracticeSchema, actor.practiceId);
  const snapshot = () => ({
    toothNotation: practice.toothNotation,
    recallMonths: practice.recallPolicy.milestones.map((m) => m.months),
    address: practice.address ?? null,
    phone: practice.phone ?? null,
    contactEmail: practice.contactEmail ?? null,
    minObservationDays: practice.minObservationDays,
    secondReadingPercent: practice.secondReadingPercent,
  });
  const before = snapshot();
  if (patch.toothNotation) practice.toothNotation = patch.toothNotation;
  if (patch.recallPolicy) practice.recallPolicy = patch.recallPolicy;
  if (patch.minObservationDays !== undefined) practice.minObservationDays = patch.minObservationDays;
  if (patch.secondReadingPercent !== undefined) practice.secondReadingPercent = patch.secondReadingPercent;
  if (patch.contact) {
    const c = patch.contact;
    if (c.address !== undefined) practice.address = c.address;
    if (c.phone !== undefined) practice.phone = c.phone;
    if (c.contactEmail !== undefined) practice.contactEmail = c.contactEmail;
  }
  await em.flush();
  readWithSession(em, null); // the request's later reads see the new settings
  await audit(em, actor, {
    action: 'practice.settings_changed',
    entityType: 'practice',
    entityId: practice.id,
    detail: {
      before: JSON.stringify(before),
      after: JSON.stringify(snapshot()),
    },
  });
  return getPracticeSettings(em, actor);
}
