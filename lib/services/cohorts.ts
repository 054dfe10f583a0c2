import 'server-only';
import { randomUUID } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import { assertCan, type Actor } from '@/lib/auth/actor';
import { CohortExportSchema, CohortSchema, CohortVersionSchema, type CohortExport } from '@/entities';
import { COHORT_VARIABLE_KEYS } from '@/lib/cohorts/catalogue';
import { env } from '@/lib/env';
import { cohortCounts, type CohortCounts } from '@/lib/outcomes/cohort-filter';
import { FACTORS, levelLabel, type FactorKey, type LevelFilters } from '@/lib/outcomes/compute';
import { enqueueCohortExport } from '@/lib/queue';
import { CASE_KIND_LABELS, type CaseKind } from '@/lib/registry/case-kinds';
import type { CohortExportStatus } from '@/lib/registry/cohort-status';
import { CohortFilterQuery, CohortId, CreateCohortBody, FilterRecord, SaveVersionBody, StartExportBody, type CohortFilters } from '@/lib/schemas/cohort';
import { levelParams } from '@/lib/schemas/outcomes';
import { deriveDownloadKey, DOWNLOAD_LINK_TTL_SECONDS, signDownloadToken, verifyDownloadToken } from '@/lib/security/download-token';
import { audit } from './audit';
import { cohortExportsProducer, cohortObjectKey } from './cohort-export';
import { ConflictError, NotFoundError, ServiceError, ValidationError } from './errors';
import { OUTCOME_READER } from './outcomes';
import { cachedOutcomeCases } from './outcomes-cache';
import { parseInput } from './parse';
import { sameDefinition } from '@/lib/cohorts/definition';
import { isUuid } from '@/lib/uuid';
import { knexOf, practiceSettings } from './registry-common';

/**
 * The researcher's area (issue 14): cohorts of the practice, their immutable versions, the live
 * counts of the builder (consenting patients only; the cases left out for want of consent are
 * counted apart) and the exports (queued here, made by jobs/cohort-export.ts). Nothing here returns
 * a name, e-mail, note or registry number: clinicians are codes (C1, C2… by their first completed
 * case), patients only counts. Every read and change is audited.
 */

export interface ClinicianCode {
  code: string;
  id: string;
}

/** The practice's clinicians as codes, by the date of their first completed case (then id): C1, C2… */
export async function clinicianCodes(em: EntityManager, practiceId: string): Promise<ClinicianCode[]> {
  const rows = (await knexOf(em)
    .select('operator_id')
    .min({ first: 'completion_date' })
    .from('treatment_case')
    .where({ practice_id: practiceId })
    .whereNotNull('completion_date')
    .groupBy('operator_id')
    .orderBy([{ column: 'first' }, { column: 'operator_id' }])) as { operator_id: string }[];
  return rows.map((r, i) => ({ code: `C${i + 1}`, id: r.operator_id }));
}

/** Parses the builder's filters (flat URL form) into what a version keeps, clinician codes to ids. */
export async function parseCohortFilters(em: EntityManager, practiceId: string, raw: unknown): Promise<CohortFilters> {
  const flat = parseInput(FilterRecord, raw ?? {});
  const q = parseInput(CohortFilterQuery, flat);
  const filters: CohortFilters = { levels: q.levels };
  if (q.from) filters.from = q.from;
  if (q.to) filters.to = q.to;
  if (q.kind) filters.kind = q.kind;
  if (q.clinicians?.length) {
    const codes = await clinicianCodes(em, practiceId);
    const byCode = new Map(codes.map((c) => [c.code, c.id]));
    const unknown = q.clinicians.filter((c) => !byCode.has(c));
    if (unknown.length) throw new ValidationError('Some fields need attention.', { clinicians: [`No clinician ${unknown.join(', ')} in this practice.`] });
    filters.clinicians = q.clinicians.map((c) => byCode.get(c)!);
  }
  return filters;
}

/** A version's filters back in the builder's flat form (clinicians as codes). */
export function filterRecordOf(f: CohortFilters, codes: readonly ClinicianCode[]): Record<string, string> {
  const byId = new Map(codes.map((c) => [c.id, c.code]));
  const out: Record<string, string> = {};
  if (f.from) out.from = f.from;
  if (f.to) out.to = f.to;
  if (f.kind) out.kind = f.kind;
  if (f.clinicians?.length) out.clinicians = f.clinicians.map((id) => byId.get(id) ?? 'former clinician').join(',');
  return { ...out, ...levelParams(f.levels) };
}

/** The filters in words, for the page and the archive's README. */
export function filtersText(f: CohortFilters, codes: readonly ClinicianCode[]): string {
  const byId = new Map(codes.map((c) => [c.id, c.code]));
  const parts: string[] = [];
  if (f.from || f.to) parts.push(`completed ${f.from ? `from ${f.from}` : ''}${f.from && f.to ? ' ' : ''}${f.to ? `to ${f.to}` : ''}`);
  if (f.kind) parts.push(`kind: ${CASE_KIND_LABELS[f.kind as CaseKind] ?? f.kind}`);
  if (f.clinicians?.length) parts.push(`clinicians: ${f.clinicians.map((id) => byId.get(id) ?? 'former clinician').join(', ')}`);
  for (const [k, codes] of Object.entries(f.levels ?? ({} as LevelFilters))) {
    if (!codes?.length) continue;
    parts.push(`${FACTORS[k as FactorKey].label.toLowerCase()}: ${codes.map((c) => levelLabel(k as FactorKey, c)).join(' or ')}`);
  }
  return parts.length ? parts.join('; ') : 'every completed case';
}

async function researchConsents(em: EntityManager, practiceId: string): Promise<Set<string>> {
  const rows = (await knexOf(em).select('id').from('patient').where({ practice_id: practiceId, research_use: true }).whereNull('archived_at')) as { id: string }[];
  return new Set(rows.map((r) => r.id));
}

/** The builder's live counts for the filters (flat URL form). */
export async function countCohort(em: EntityManager, actor: Actor, raw: unknown): Promise<CohortCounts & { filtersText: string }> {
  assertCan(actor, 'cohort.export');
  const filters = await parseCohortFilters(em, actor.practiceId, raw);
  const [settings, { rows }, consents, codes] = await Promise.all([
    practiceSettings(em, actor.practiceId),
    cachedOutcomeCases(em, actor.practiceId, OUTCOME_READER),
    researchConsents(em, actor.practiceId),
    clinicianCodes(em, actor.practiceId),
  ]);
  const counts = cohortCounts(rows, filters, (id) => consents.has(id), settings.minObservationDays);
  await audit(em, actor, { action: 'cohort.counts_read', detail: { cases: counts.cases, leftOut: counts.leftOutCases } });
  return { ...counts, filtersText: filtersText(filters, codes) };
}

export interface CohortListItem {
  id: string;
  name: string;
  createdAt: string;
  versions: number;
  lastExport: { status: CohortExportStatus; at: string } | null;
}

export async function listCohorts(em: EntityManager, actor: Actor): Promise<CohortListItem[]> {
  assertCan(actor, 'cohort.export');
  const knex = knexOf(em);
  const rows = (await knex
    .select(
      'c.id',
      'c.name',
      'c.created_at',
      knex.raw('(select count(*)::int from cohort_version v where v.cohort_id = c.id) as versions'),
      knex.raw(`(select json_build_object('status', e.status, 'at', e.created_at) from cohort_export e join cohort_version v on v.id = e.version_id where v.cohort_id = c.id order by e.created_at desc limit 1) as last_export`),
    )
    .from('cohort as c')
    .where({ 'c.practice_id': actor.practiceId })
    .whereNull('c.archived_at')
    .orderBy('c.created_at', 'desc')) as { id: string; name: string; created_at: Date; versions: number; last_export: { status: CohortExportStatus; at: string } | null }[];
  return rows.map((r) => ({ id: r.id, name: r.name, createdAt: new Date(r.created_at).toISOString(), versions: r.versions, lastExport: r.last_export }));
}

export async function createCohort(em: EntityManager, actor: Actor, raw: unknown): Promise<{ id: string; name: string }> {
  assertCan(actor, 'cohort.export');
  const body = parseInput(CreateCohortBody, raw);
  const cohort = em.create(CohortSchema, { practice: actor.practiceId, name: body.name, owner: actor.userId });
  await em.persist(cohort).flush();
  await audit(em, actor, { action: 'cohort.created', entityType: 'cohort', entityId: cohort.id });
  return { id: cohort.id, name: cohort.name };
}

async function cohortOf(em: EntityManager, actor: Actor, id: unknown) {
  const parsed = CohortId.safeParse(id);
  if (!parsed.success) throw new NotFoundError('No such cohort.');
  const cohort = await em.findOne(CohortSchema, { id: parsed.data, practice: actor.practiceId, archivedAt: null });
  if (!cohort) throw new NotFoundError('No such cohort.');
  return cohort;
}

export interface VersionView {
  number: number;
  filters: Record<string, string>;
  filtersText: string;
  variables: string[];
  k: number;
  createdAt: string;
}

export interface ExportView {
  id: string;
  version: number;
  status: CohortExportStatus;
  progress: { done: number; total: number };
  figures: { cases: number | null; patients: number | null; reviews: number | null; generalised: number | null; suppressed: number | null; minL: number | null; files: string[] | null };
  error: string | null;
  createdAt: string;
  finishedAt: string | null;
  cancelRequested: boolean;
  /** a signed link, valid for DOWNLOAD_LINK_TTL_SECONDS, when the archive is ready */
  downloadUrl: string | null;
  byteSize: number | null;
}

export interface CohortView {
  id: string;
  name: string;
  createdAt: string;
  versions: VersionView[];
  exports: ExportView[];
  clinicians: string[];
}

export async function readCohort(em: EntityManager, actor: Actor, id: unknown): Promise<CohortView> {
  assertCan(actor, 'cohort.export');
  const cohort = await cohortOf(em, actor, id);
  const [versions, codes] = await Promise.all([em.find(CohortVersionSchema, { cohort: cohort.id }, { orderBy: { number: 'desc' } }), clinicianCodes(em, actor.practiceId)]);
  const exports = await em.find(CohortExportSchema, { version: { cohort: cohort.id } }, { orderBy: { createdAt: 'desc' }, limit: 20, populate: ['version'] });
  await audit(em, actor, { action: 'cohort.read', entityType: 'cohort', entityId: cohort.id });
  return {
    id: cohort.id,
    name: cohort.name,
    createdAt: cohort.createdAt.toISOString(),
    versions: versions.map((v) => ({ number: v.number, filters: filterRecordOf(v.filters, codes), filtersText: filtersText(v.filters, codes), variables: v.variables, k: v.k, createdAt: v.createdAt.toISOString() })),
    exports: exports.map((e) => exportView(e, e.version.getEntity().number, actor)),
    clinicians: codes.map((c) => c.code),
  };
}

const downloadKey = () => deriveDownloadKey(env.NEXTAUTH_SECRET ?? '');

/** The signed link of a finished export (the page's and the e-mail's). */
export function downloadPath(exportId: string, practiceId: string, now = new Date()): string {
  const token = signDownloadToken({ exportId, practiceId, expiresAt: new Date(now.getTime() + DOWNLOAD_LINK_TTL_SECONDS * 1000) }, downloadKey());
  return `/api/cohort-exports/${exportId}/download?token=${encodeURIComponent(token)}`;
}

function exportView(e: CohortExport, version: number, actor: Actor): ExportView {
  return {
    id: e.id,
    version,
    status: e.status,
    progress: { done: e.progressDone, total: e.progressTotal },
    figures: { cases: e.cases, patients: e.patients, reviews: e.reviews, generalised: e.generalised, suppressed: e.suppressed, minL: e.minL, files: e.files },
    error: e.error,
    createdAt: e.createdAt.toISOString(),
    finishedAt: e.finishedAt?.toISOString() ?? null,
    cancelRequested: e.cancelRequestedAt !== null,
    downloadUrl: e.status === 'done' ? downloadPath(e.id, actor.practiceId) : null,
    byteSize: e.byteSize,
  };
}

/** Saves the builder's definition as the cohort's next version (numbers are per cohort; a saved version never changes). */
export async function saveCohortVersion(em: EntityManager, actor: Actor, cohortId: unknown, raw: unknown): Promise<{ number: number; unchanged?: true }> {
  assertCan(actor, 'cohort.export');
  const cohort = await cohortOf(em, actor, cohortId);
  const body = parseInput(SaveVersionBody, raw ?? {});
  const unknownVars = body.variables.filter((v) => !COHORT_VARIABLE_KEYS.includes(v));
  if (unknownVars.length) throw new ValidationError('Some fields need attention.', { variables: [`Unknown variable${unknownVars.length > 1 ? 's' : ''}: ${unknownVars.slice(0, 5).join(', ')}.`] });
  const filters = await parseCohortFilters(em, actor.practiceId, body.filters);
  const saved = await em.transactional(async (tx) => {
    const knex = knexOf(tx);
    await knex.raw('select id from cohort where id = ? for update', [cohort.id]);
    const latest = (await knex('cohort_version').where({ cohort_id: cohort.id }).orderBy('number', 'desc').first('number', 'filters', 'variables', 'k')) as
      | { number: number; filters: unknown; variables: string[]; k: number }
      | undefined;
    // Saved unchanged: the last version already says this; no new version.
    if (latest && sameDefinition(latest, { filters, variables: body.variables, k: body.k })) return { number: latest.number, unchanged: true as const };
    const next = (latest?.number ?? 0) + 1;
    tx.create(CohortVersionSchema, { cohort: cohort.id, number: next, filters, variables: body.variables, k: body.k, createdBy: actor.userId });
    await tx.flush();
    return { number: next };
  });
  if (saved.unchanged) return saved;
  const number = saved.number;
  await audit(em, actor, { action: 'cohort.version_saved', entityType: 'cohort', entityId: cohort.id, detail: { version: number, variables: body.variables.length, k: body.k } });
  return { number };
}

/** Queues an export of a saved version: the row first (its object key fixed), then the job under its deterministic id. */
export async function startCohortExport(em: EntityManager, actor: Actor, cohortId: unknown, raw: unknown): Promise<ExportView> {
  assertCan(actor, 'cohort.export');
  const cohort = await cohortOf(em, actor, cohortId);
  const body = parseInput(StartExportBody, raw ?? {});
  const version = await em.findOne(CohortVersionSchema, { cohort: cohort.id, number: body.version });
  if (!version) throw new NotFoundError('No such saved version; save the cohort first.');
  const id = randomUUID();
  const row = em.create(CohortExportSchema, { id, practice: actor.practiceId, version: version.id, requestedBy: actor.userId, objectKey: cohortObjectKey(actor.practiceId, cohort.id, id) });
  await em.persist(row).flush();
  await audit(em, actor, { action: 'cohort.export_requested', entityType: 'cohort_export', entityId: row.id, detail: { cohort: cohort.id, version: version.number } });
  try {
    await enqueueCohortExport(await cohortExportsProducer(), { practiceId: actor.practiceId, exportId: row.id });
  } catch {
    await em.nativeUpdate(CohortExportSchema, { id: row.id }, { status: 'failed', error: 'The queue could not be reached; try again.', finishedAt: new Date() });
    throw new ServiceError('The export queue cannot be reached just now; nothing was started. Try again in a minute.', 503);
  }
  return exportView(row, version.number, actor);
}

async function exportOf(em: EntityManager, actor: Actor, id: unknown) {
  if (!isUuid(id)) throw new NotFoundError('No such export.');
  const row = await em.findOne(CohortExportSchema, { id, practice: actor.practiceId }, { populate: ['version'] });
  if (!row) throw new NotFoundError('No such export.');
  return row;
}

export async function readCohortExport(em: EntityManager, actor: Actor, id: unknown): Promise<ExportView> {
  assertCan(actor, 'cohort.export');
  const row = await exportOf(em, actor, id);
  return exportView(row, row.version.getEntity().number, actor);
}

/**
 * Cancels an export: a queued one at once (the job then finds it cancelled and does nothing); a
 * running one is asked to stop (the job reads the request with its progress, aborts the writer,
 * removes the partial object and marks it cancelled).
 */
export async function cancelCohortExport(em: EntityManager, actor: Actor, id: unknown): Promise<ExportView> {
  assertCan(actor, 'cohort.export');
  const row = await exportOf(em, actor, id);
  const knex = knexOf(em);
  const now = new Date();
  const queued = await knex('cohort_export').where({ id: row.id, status: 'queued' }).update({ status: 'cancelled', cancel_requested_at: now, finished_at: now });
  if (!queued) await knex('cohort_export').where({ id: row.id, status: 'running' }).whereNull('cancel_requested_at').update({ cancel_requested_at: now });
  await audit(em, actor, { action: 'cohort.export_cancelled', entityType: 'cohort_export', entityId: row.id });
  await em.refresh(row);
  return exportView(row, row.version.getEntity().number, actor);
}

/** Opens a finished export's archive for a signed link that has not expired, in the reader's practice only. */
export async function openCohortDownload(em: EntityManager, actor: Actor, id: unknown, token: unknown): Promise<{ key: string; filename: string; byteSize: number | null }> {
  assertCan(actor, 'cohort.export');
  if (typeof token !== 'string' || token.length > 400) throw new NotFoundError('No such export.');
  const row = await exportOf(em, actor, id);
  const check = verifyDownloadToken(token, { exportId: row.id, practiceId: actor.practiceId }, downloadKey(), new Date());
  if (!check.ok) {
    if (check.reason === 'expired') throw new ServiceError('This download link has expired; open the cohort for a new one.', 410);
    throw new NotFoundError('No such export.');
  }
  if (row.status !== 'done') throw new ConflictError('This export is not ready.');
  await audit(em, actor, { action: 'cohort.downloaded', entityType: 'cohort_export', entityId: row.id, detail: { version: row.version.getEntity().number, cases: row.cases } });
  return { key: row.objectKey, filename: `cohort-${row.id.slice(0, 8)}-v${row.version.getEntity().number}.zip`, byteSize: row.byteSize };
}
