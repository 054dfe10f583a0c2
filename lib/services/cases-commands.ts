import 'server-only';
/** The case commands: create, update (with the recall plan's changes), archive, and their checks. */
import { randomUUID } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import { PatientSchema, RecallVisitSchema, ReferrerSchema, ReviewSchema, TreatmentCaseSchema, type RecallVisit, type TreatmentCase } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { CaseCreateSchema, CaseUpdateSchema, type CaseCreate } from '@/lib/schemas/case';
import { markPastDue, planImportedVisits, replan, type RecallPolicy, type VisitStatus } from '@/lib/recall';
import { formatTooth } from '@/lib/teeth';
import { audit } from './audit';
import { ConflictError, ValidationError } from './errors';
import { parseInput } from './parse';
import { assertClinician, bodyId, findCase, practiceSettings, presentKeys, todayIn } from './registry-common';
import { reassessReviews } from './reviews';
import { loadVisits, setVisitSummary } from './visits';
import { storedCaseDetail, type CaseDetail } from './case-page';
import { caseColumns, caseValues } from './case-columns';

// --- changes --------------------------------------------------------------------------------------

/**
 * Creates a case. A case entered with its completion date gets its recall visits from the
 * practice's policy at once (those whose window has already ended are marked missed, as for
 * imported cases). Dates in the future are refused.
 */
export async function createCase(em: EntityManager, actor: Actor, raw: unknown): Promise<CaseDetail> {
  assertCan(actor, 'case.write');
  const input = parseInput(CaseCreateSchema, raw);
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  await checkReferences(em, actor, input, today);
  await checkPreviousCase(em, actor, input);
  const id = randomUUID();
  const c = await em.transactional(async (tx) => {
    const entity = tx.create(TreatmentCaseSchema, {
      id,
      practice: actor.practiceId,
      createdBy: actor.userId,
      source: 'form',
      ...caseColumns(input),
      patient: input.patientId,
      operator: input.operatorId,
    });
    const visits = input.completionDate ? createPlannedVisits(tx, entity, input.completionDate, settings.recallPolicy, today) : [];
    setVisitSummary(entity, visits);
    await tx.flush();
    return entity;
  });
  await audit(em, actor, {
    action: 'case.created',
    entityType: 'case',
    entityId: c.id,
    detail: { patientId: input.patientId, completed: Boolean(input.completionDate), previousCaseId: input.previousCaseId ?? null },
  });
  return storedCaseDetail(em, actor.practiceId, c.id, settings);
}

export interface CaseUpdateResult extends CaseDetail {
  /** What the change did to the recall plan. */
  plan: { created: number; moved: number; kept: number; removed: number; reassessedReviews: number };
}

/**
 * Changes some fields of a case; the merged case is validated as a whole. Setting the
 * completion date creates the recall plan; changing it moves only the visits not yet attended
 * or ended (lib/recall replan) and re-computes the reviews' outcomes; clearing it is allowed
 * only while every visit is still planned and there is no review. `archived: true|false`
 * archives or restores.
 */
export async function updateCase(em: EntityManager, actor: Actor, id: string, raw: unknown): Promise<CaseUpdateResult> {
  assertCan(actor, 'case.write');
  const c = await findCase(em, actor, id);
  const body = raw && typeof raw === 'object' && !Array.isArray(raw) ? (raw as Record<string, unknown>) : {};
  const archived = body.archived;
  if (archived !== undefined && typeof archived !== 'boolean') {
    throw new ValidationError('Some fields need attention.', { archived: ['archived is true or false.'] });
  }
  const { archived: _archived, ...rest } = body;
  const patch = parseInput(CaseUpdateSchema, { kind: c.kind, ...rest }) as Record<string, unknown>;
  const merged = parseInput(CaseCreateSchema, { ...caseValues(c), ...presentKeys(patch, { kind: c.kind, ...rest }) });
  const settings = await practiceSettings(em, actor.practiceId);
  const today = todayIn(settings.timeZone);
  await checkReferences(em, actor, merged, today, c);
  await checkPreviousCase(em, actor, merged, c);

  const plan = { created: 0, moved: 0, kept: 0, removed: 0, reassessedReviews: 0 };
  const wasArchived = Boolean(c.archivedAt);
  const before = { completionDate: c.completionDate ?? null, paiScore: c.paiScore };
  const changedFields = changedKeys(caseValues(c), merged);
  await em.transactional(async (tx) => {
    const entity = await tx.findOneOrFail(TreatmentCaseSchema, c.id);
    tx.assign(entity, caseColumns(merged));
    const visits = await loadVisits(tx, entity.id);
    const after = merged.completionDate ?? null;
    if (after !== before.completionDate) {
      if (!after) {
        const reviews = await tx.count(ReviewSchema, { case: entity.id });
        if (reviews > 0 || visits.some((v) => v.status !== 'planned')) {
          throw new ConflictError('The case has visits under way or reviews: correct the completion date instead of clearing it.');
        }
        for (const v of visits) tx.remove(v);
        plan.removed = visits.length;
        visits.length = 0;
      } else if (!before.completionDate) {
        visits.push(...createPlannedVisits(tx, entity, after, settings.recallPolicy, today));
        plan.created = visits.length;
      } else {
        const r = replan(visits.map(toExisting), after, settings.recallPolicy);
        const byId = new Map(visits.map((v) => [v.id, v]));
        for (const m of r.move) {
          const v = byId.get(m.id)!;
          v.dueDate = m.to.dueDate;
          v.windowStart = m.to.windowStart;
          v.windowEnd = m.to.windowEnd;
          if (m.reinvite) v.reinviteNeeded = true;
        }
        for (const add of r.add) {
          const [v] = createVisits(tx, entity, [{ ...add, status: 'planned' }]);
          visits.push(v!);
        }
        for (const change of markPastDue(visits.map(toExisting), today)) {
          const v = byId.get(change.id) ?? visits.find((x) => x.id === change.id)!;
          v.status = change.to;
          v.statusChangedAt = new Date();
        }
        plan.moved = r.move.length;
        plan.created = r.add.length;
        plan.kept = r.keep.length;
      }
    }
    if (after !== before.completionDate || merged.paiScore !== before.paiScore) {
      plan.reassessedReviews = await reassessReviews(tx, entity);
    }
    setVisitSummary(entity, visits);
    if (archived === true && !entity.archivedAt) entity.archivedAt = new Date();
    if (archived === false && entity.archivedAt) entity.archivedAt = null;
    await tx.flush();
  });
  if (changedFields.length || plan.created || plan.moved || plan.removed) {
    await audit(em, actor, { action: 'case.updated', entityType: 'case', entityId: c.id, detail: { fields: changedFields, plan } });
  }
  if (archived === true && !wasArchived) await audit(em, actor, { action: 'case.archived', entityType: 'case', entityId: c.id });
  if (archived === false && wasArchived) await audit(em, actor, { action: 'case.restored', entityType: 'case', entityId: c.id });
  return { ...(await storedCaseDetail(em, actor.practiceId, c.id, settings)), plan };
}

/** Archives a case: out of the working lists, its record and visits kept. Archiving twice changes nothing. */
export async function archiveCase(em: EntityManager, actor: Actor, id: string): Promise<CaseDetail> {
  assertCan(actor, 'case.write');
  const c = await findCase(em, actor, id);
  if (!c.archivedAt) {
    c.archivedAt = new Date();
    await em.flush();
    await audit(em, actor, { action: 'case.archived', entityType: 'case', entityId: c.id });
  }
  return storedCaseDetail(em, actor.practiceId, c.id, await practiceSettings(em, actor.practiceId));
}


/** Creates the visits of a case completed on `completionDate`; those already past due are missed. */
export function createPlannedVisits(em: EntityManager, c: TreatmentCase, completionDate: string, policy: RecallPolicy, today: string): RecallVisit[] {
  return createVisits(em, c, planImportedVisits(completionDate, policy, today));
}

function createVisits(
  em: EntityManager,
  c: TreatmentCase,
  planned: { milestone: number; dueDate: string; windowStart: string; windowEnd: string; status: VisitStatus }[],
): RecallVisit[] {
  return planned.map(
    (p) =>
      em.create(RecallVisitSchema, {
        practice: c.practice,
        case: c,
        milestone: p.milestone,
        dueDate: p.dueDate,
        windowStart: p.windowStart,
        windowEnd: p.windowEnd,
        status: p.status,
        // A visit created past its window (a case entered late, an import) is missed because its window ended.
        ...(p.status === 'missed' ? { missedReason: 'window_ended' } : {}),
      }),
  );
}

function toExisting(v: RecallVisit) {
  return { id: v.id, milestone: v.milestone, dueDate: v.dueDate, windowStart: v.windowStart, windowEnd: v.windowEnd, status: v.status as VisitStatus };
}

function changedKeys(before: Record<string, unknown>, after: Record<string, unknown>): string[] {
  const keys = new Set([...Object.keys(before), ...Object.keys(after)]);
  return [...keys].filter((k) => stable(before[k] ?? null) !== stable(after[k] ?? null)).sort();
}

/** JSON with object keys sorted (jsonb gives canals back with its own key order). */
function stable(v: unknown): string {
  return JSON.stringify(v, (_k, value: unknown) =>
    value && typeof value === 'object' && !Array.isArray(value)
      ? Object.fromEntries(Object.entries(value as Record<string, unknown>).sort(([a], [b]) => a.localeCompare(b)))
      : value,
  );
}

async function checkReferences(em: EntityManager, actor: Actor, input: CaseCreate, today: string, existing?: TreatmentCase) {
  const fieldErrors: Record<string, string[]> = {};
  const patientId = bodyId(input.patientId, 'patientId', 'Choose a patient of this practice.')!;
  if (!existing || existing.patient.id !== patientId) {
    const patient = await em.findOne(PatientSchema, { id: patientId, practice: actor.practiceId }, { fields: ['id', 'archivedAt'] });
    if (!patient) fieldErrors.patientId = ['Choose a patient of this practice.'];
    else if (patient.archivedAt) fieldErrors.patientId = ['The patient is archived: restore them before adding a case.'];
  }
  if (!existing || existing.operator.id !== input.operatorId) await assertClinician(em, actor.practiceId, input.operatorId, 'operatorId');
  if (input.referrerId) {
    const referrerId = bodyId(input.referrerId, 'referrerId', 'Choose a referrer of this practice.')!;
    if ((await em.count(ReferrerSchema, { id: referrerId, practice: actor.practiceId })) === 0) {
      fieldErrors.referrerId = ['Choose a referrer of this practice.'];
    }
  }
  if (input.startDate > today) fieldErrors.startDate = ['The start date is in the future.'];
  if (input.completionDate && input.completionDate > today) fieldErrors.completionDate = ['The completion date is in the future.'];
  if (Object.keys(fieldErrors).length) throw new ValidationError('Some fields need attention.', fieldErrors);
}

const PREVIOUS_CASE_UNKNOWN = 'Choose an earlier case of this patient’s tooth.';

/**
 * The link to the tooth's earlier case (`previousCaseId`): a case of this practice (another
 * practice's id is answered as an unknown one), of the same patient and tooth, completed on or
 * before this case's start, not this case nor a case that follows it, and not already followed by
 * another case (a tooth's cases form one chain). On an edit, the cases that follow this one must
 * still agree with its patient, tooth and completion date.
 */
async function checkPreviousCase(em: EntityManager, actor: Actor, input: CaseCreate, existing?: TreatmentCase) {
  const fail = (message: string, field = 'previousCaseId'): never => {
    throw new ValidationError('Some fields need attention.', { [field]: [message] });
  };
  if (existing) {
    const later = await em.find(TreatmentCaseSchema, { previousCase: existing.id, practice: actor.practiceId }, { fields: ['id', 'patient', 'tooth', 'startDate'] });
    for (const l of later) {
      if (l.patient.id !== input.patientId) fail('A later treatment of this tooth is linked to this case: the patient cannot change.', 'patientId');
      if (l.tooth !== input.tooth) fail('A later treatment of this tooth is linked to this case: the tooth cannot change.', 'tooth');
      if (!input.completionDate) fail('A later treatment of this tooth is linked to this case: it stays completed.', 'completionDate');
      if (input.completionDate! > l.startDate) fail(`A later treatment of this tooth started on ${l.startDate}: this case is completed by then.`, 'completionDate');
    }
  }
  if (!input.previousCaseId) return;
  const id = bodyId(input.previousCaseId, 'previousCaseId', PREVIOUS_CASE_UNKNOWN)!;
  if (existing && id === existing.id) fail('A case cannot follow itself: choose an earlier case of the tooth.');
  const previous = await em.findOne(TreatmentCaseSchema, { id, practice: actor.practiceId }, { fields: ['id', 'patient', 'tooth', 'completionDate', 'previousCase'] });
  if (!previous) fail(PREVIOUS_CASE_UNKNOWN);
  const p = previous!;
  if (p.patient.id !== input.patientId) fail('The earlier case is of another patient: choose a case of this patient.');
  if (p.tooth !== input.tooth) fail(`The earlier case treated tooth ${formatTooth(p.tooth, 'fdi')} (FDI), not tooth ${formatTooth(input.tooth, 'fdi')}.`);
  if (!p.completionDate) fail('The earlier case is not completed yet: complete it before linking a later treatment to it.');
  if (p.completionDate! > input.startDate) fail(`The earlier case was completed on ${p.completionDate}, after this case started (${input.startDate}).`);
  // No loop: walk back from the earlier case (a tooth has few cases).
  let back = p.previousCase?.id;
  for (let step = 0; back && step < 50; step++) {
    if (existing && back === existing.id) fail('The earlier case already follows this one: choose a case that came before it.');
    const prior = await em.findOne(TreatmentCaseSchema, { id: back, practice: actor.practiceId }, { fields: ['id', 'previousCase'] });
    back = prior?.previousCase?.id;
  }
  const followedBy = await em.findOne(
    TreatmentCaseSchema,
    { previousCase: p.id, practice: actor.practiceId, ...(existing ? { id: { $ne: existing.id } } : {}) },
    { fields: ['id', 'startDate'] },
  );
  if (followedBy) fail(`The earlier case is already followed by a treatment started on ${followedBy.startDate}: link to the latest treatment of the tooth.`);
}
