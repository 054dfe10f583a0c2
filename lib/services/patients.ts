import 'server-only';
import { z } from 'zod';
import { UniqueConstraintViolationException } from '@mikro-orm/core';
import type { EntityManager } from '@mikro-orm/postgresql';
import { patientSearchSql, PatientSchema, UserSchema, type Patient } from '@/entities';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { Paging } from '@/lib/schemas/paging';
import { PatientCreateSchema, PatientUpdateSchema, recallConsent, type PatientCreate, type RecallChannel, type Sex } from '@/lib/schemas/patient';
import { audit, auditRead } from './audit';
import { ConflictError, NotFoundError } from './errors';
import { parseInput } from './parse';
import { ArchivedFilter, SearchText, SortDir, assertId, displayName, likeWord, pageOffset, presentKeys, searchWords, whereArchived, type Page } from './registry-common';

// --- shapes the screens get -----------------------------------------------------------------------

/** What the list row and the record share. */
interface PatientSummary {
  id: string;
  registryNumber: string;
  givenName: string;
  familyName: string;
  /** "Family, Given". */
  name: string;
  dateOfBirth: string;
  sex: Sex;
  recallContact: boolean;
  recallChannel: RecallChannel;
  researchUse: boolean;
  archived: boolean;
}

export interface PatientRow extends PatientSummary {
  caseCount: number;
  /** Completion date of the patient's latest completed case. */
  lastCompletionDate: string | null;
}

export interface PatientView extends PatientSummary {
  email: string | null;
  phone: string | null;
  postalCode: string | null;
  consentDate: string;
  consentRecordedBy: { id: string; name: string | null } | null;
  archivedAt: string | null;
  createdAt: string;
  updatedAt: string;
}

export const PatientListQuery = Paging.extend({
  q: SearchText,
  archived: ArchivedFilter,
  sort: z.enum(['name', 'registryNumber', 'createdAt'], { error: 'sort is name, registryNumber or createdAt.' }).default('name'),
  dir: SortDir('asc'),
});
export type PatientListQueryInput = z.input<typeof PatientListQuery>;

// --- reads ----------------------------------------------------------------------------------------

/**
 * The practice's patients, one page, searched by registry number and name (every typed word
 * must occur in one of them; case-insensitive). One audit event per request, naming the rows shown.
 */
export async function listPatients(em: EntityManager, actor: Actor, raw: unknown): Promise<Page<PatientRow>> {
  assertCan(actor, 'patient.read');
  const q = parseInput(PatientListQuery, raw);
  const knex = em.getKnex();
  const base = whereArchived(knex('patient as p').where('p.practice_id', actor.practiceId), 'p.archived_at', q.archived);
  for (const word of searchWords(q.q)) base.whereRaw(`${patientSearchSql('p')} like ?`, [likeWord(word)]);

  const order: [string, 'asc' | 'desc'][] =
    q.sort === 'registryNumber'
      ? [['p.registry_number', q.dir]]
      : q.sort === 'createdAt'
        ? [['p.created_at', q.dir]]
        : [
            ['p.family_name', q.dir],
            ['p.given_name', q.dir],
          ];
  const [countRow, rows] = await Promise.all([
    base.clone().count<{ n: string }[]>('* as n'),
    base
      .clone()
      .select(
        'p.id',
        'p.registry_number',
        'p.given_name',
        'p.family_name',
        'p.date_of_birth',
        'p.sex',
        'p.recall_contact',
        'p.recall_channel',
        'p.research_use',
        'p.archived_at',
      )
      .orderBy([...order.map(([column, order]) => ({ column, order })), { column: 'p.id', order: q.dir }])
      .limit(q.pageSize)
      .offset(pageOffset(q)),
  ]);
  const ids = rows.map((r: { id: string }) => r.id);
  const stats = ids.length
    ? await knex('treatment_case')
        .select('patient_id')
        .count('* as n')
        .max('completion_date as last')
        .whereIn('patient_id', ids)
        .andWhere('practice_id', actor.practiceId)
        .whereNull('archived_at')
        .groupBy('patient_id')
    : [];
  const byPatient = new Map((stats as { patient_id: string; n: string; last: string | null }[]).map((s) => [s.patient_id, s]));
  await audit(em, actor, {
    action: 'patient.list',
    entityType: 'patient',
    detail: { page: q.page, pageSize: q.pageSize, searched: Boolean(q.q), archived: q.archived, ids },
  });
  return {
    rows: rows.map((r: Record<string, unknown>) => {
      const s = byPatient.get(r.id as string) as { n: string; last: string | null } | undefined;
      return {
        id: r.id as string,
        registryNumber: r.registry_number as string,
        givenName: r.given_name as string,
        familyName: r.family_name as string,
        name: displayName({ givenName: r.given_name as string, familyName: r.family_name as string }),
        dateOfBirth: r.date_of_birth as string,
        sex: r.sex as Sex,
        recallContact: r.recall_contact as boolean,
        recallChannel: r.recall_channel as RecallChannel,
        researchUse: r.research_use as boolean,
        archived: r.archived_at !== null,
        caseCount: s ? Number(s.n) : 0,
        lastCompletionDate: s?.last ?? null,
      };
    }),
    total: Number(countRow[0]?.n ?? 0),
    page: q.page,
    pageSize: q.pageSize,
  };
}

/** Loads a patient of the actor's practice or answers 404 (also for another practice's id). */
export async function findPatient(em: EntityManager, actor: Actor, id: string): Promise<Patient> {
  const patient = await em.findOne(PatientSchema, { id: assertId(id, 'patient'), practice: actor.practiceId });
  if (!patient) throw new NotFoundError('No such patient.');
  return patient;
}

/** One patient's record (contact details and consents). Audited as a read. */
export async function getPatient(em: EntityManager, actor: Actor, id: string): Promise<PatientView> {
  assertCan(actor, 'patient.read');
  const patient = await findPatient(em, actor, id);
  await auditRead(em, actor, { action: 'patient.read', entityType: 'patient', entityId: patient.id });
  return patientView(em, patient);
}

// --- changes --------------------------------------------------------------------------------------

type PatientFields = Pick<PatientCreate, 'registryNumber' | 'givenName' | 'familyName' | 'dateOfBirth' | 'sex' | 'recallContact' | 'recallChannel' | 'researchUse' | 'consentDate'> & {
  email?: string | null;
  phone?: string | null;
  postalCode?: string | null;
};

/** A patient's identity, contact and consent columns (absent contact details as null): one mapping for the form, the import and the seed. */
export function patientColumns(p: PatientFields) {
  return {
    registryNumber: p.registryNumber,
    givenName: p.givenName,
    familyName: p.familyName,
    dateOfBirth: p.dateOfBirth,
    sex: p.sex,
    email: p.email ?? null,
    phone: p.phone ?? null,
    postalCode: p.postalCode ?? null,
    recallContact: p.recallContact,
    recallChannel: p.recallChannel,
    researchUse: p.researchUse,
    consentDate: p.consentDate,
  };
}

/** Creates a patient; the consents are recorded as given by the actor. */
export async function createPatient(em: EntityManager, actor: Actor, raw: unknown): Promise<PatientView> {
  assertCan(actor, 'patient.write');
  const input = parseInput(PatientCreateSchema, raw);
  await assertRegistryNumberFree(em, actor.practiceId, input.registryNumber);
  const patient = em.create(PatientSchema, {
    practice: actor.practiceId,
    ...patientColumns(input),
    consentRecordedBy: actor.userId,
    archivedAt: input.archived ? new Date() : null,
  });
  await flushUnique(em);
  await audit(em, actor, { action: 'patient.created', entityType: 'patient', entityId: patient.id });
  return patientView(em, patient);
}

const CONSENT_FIELDS = ['recallContact', 'recallChannel', 'researchUse', 'consentDate'] as const;
const EDITABLE_FIELDS = [
  'registryNumber',
  'givenName',
  'familyName',
  'dateOfBirth',
  'sex',
  'email',
  'phone',
  'postalCode',
  ...CONSENT_FIELDS,
] as const;

/**
 * Changes some fields of a patient. The merged record is checked again as a whole (a recall
 * channel needs its contact detail). A change to a consent records the actor as who recorded it.
 * `archived: true|false` archives or restores.
 */
export async function updatePatient(em: EntityManager, actor: Actor, id: string, raw: unknown): Promise<PatientView> {
  assertCan(actor, 'patient.write');
  const patient = await findPatient(em, actor, id);
  const patch = parseInput(PatientUpdateSchema, raw);
  const current = {
    ...patientColumns(patient),
    // A record whose consent was withdrawn before the rule was kept everywhere still says e-mail.
    ...recallConsent(patient.recallContact, patient.recallChannel as RecallChannel),
    email: patient.email ?? undefined,
    phone: patient.phone ?? undefined,
    postalCode: patient.postalCode ?? undefined,
  };
  const merged = parseInput(PatientCreateSchema, { ...current, ...presentKeys(patch, raw) });
  const changed = EDITABLE_FIELDS.filter((f) => (merged[f] ?? null) !== (current[f] ?? null));
  if (merged.registryNumber !== patient.registryNumber) await assertRegistryNumberFree(em, actor.practiceId, merged.registryNumber);
  for (const f of changed) (patient as Record<string, unknown>)[f] = merged[f] ?? null;
  // Such a record is repaired with the edit (not counted as a consent change: nobody changed it).
  patient.recallChannel = merged.recallChannel;
  if (changed.some((f) => (CONSENT_FIELDS as readonly string[]).includes(f))) {
    patient.consentRecordedBy = em.getReference(UserSchema, actor.userId, { wrapped: true });
  }
  let archiveChange: 'archived' | 'restored' | null = null;
  if (patch.archived === true && !patient.archivedAt) {
    patient.archivedAt = new Date();
    archiveChange = 'archived';
  } else if (patch.archived === false && patient.archivedAt) {
    patient.archivedAt = null;
    archiveChange = 'restored';
  }
  await flushUnique(em);
  if (changed.length) await audit(em, actor, { action: 'patient.updated', entityType: 'patient', entityId: patient.id, detail: { fields: changed } });
  if (archiveChange) await audit(em, actor, { action: `patient.${archiveChange}`, entityType: 'patient', entityId: patient.id });
  return patientView(em, patient);
}

/** Archives a patient: out of the working lists, nothing deleted. Archiving twice changes nothing. */
export async function archivePatient(em: EntityManager, actor: Actor, id: string): Promise<PatientView> {
  assertCan(actor, 'patient.write');
  const patient = await findPatient(em, actor, id);
  if (!patient.archivedAt) {
    patient.archivedAt = new Date();
    await em.flush();
    await audit(em, actor, { action: 'patient.archived', entityType: 'patient', entityId: patient.id });
  }
  return patientView(em, patient);
}

// --- helpers --------------------------------------------------------------------------------------

async function assertRegistryNumberFree(em: EntityManager, practiceId: string, registryNumber: string) {
  const taken = await em.count(PatientSchema, { practice: practiceId, registryNumber });
  if (taken > 0) throw new ConflictError(`Registry number ${registryNumber} is already used by another patient of this practice.`);
}

async function flushUnique(em: EntityManager) {
  try {
    await em.flush();
  } catch (e) {
    if (e instanceof UniqueConstraintViolationException) throw new ConflictError('That registry number is already used by another patient of this practice.');
    throw e;
  }
}

async function patientView(em: EntityManager, p: Patient): Promise<PatientView> {
  const recorder = p.consentRecordedBy ? await em.findOne(UserSchema, p.consentRecordedBy.id, { fields: ['id', 'name'] }) : null;
  return {
    id: p.id,
    registryNumber: p.registryNumber,
    givenName: p.givenName,
    familyName: p.familyName,
    name: displayName(p),
    dateOfBirth: p.dateOfBirth,
    sex: p.sex as Sex,
    email: p.email ?? null,
    phone: p.phone ?? null,
    postalCode: p.postalCode ?? null,
    recallContact: p.recallContact,
    recallChannel: p.recallChannel as RecallChannel,
    researchUse: p.researchUse,
    consentDate: p.consentDate,
    consentRecordedBy: recorder ? { id: recorder.id, name: recorder.name ?? null } : null,
    archived: Boolean(p.archivedAt),
    archivedAt: p.archivedAt?.toISOString() ?? null,
    createdAt: p.createdAt.toISOString(),
    updatedAt: p.updatedAt.toISOString(),
  };
}
