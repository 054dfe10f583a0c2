import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import fc from 'fast-check';
import Papa from 'papaparse';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import type { Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import { setLogSink } from '@/lib/log/logger';
import { errorResponse } from '@/lib/http';
import { deriveLinkSecret, issueReplyToken } from '@/lib/recall/reply-token';
import { templateCsv } from '@/lib/registry/csv';
import { reviewTemplateCsv } from '@/lib/registry/review-csv';
import { createCase } from '@/lib/services/cases';
import { uploadFilm } from '@/lib/services/films';
import { createCohort, downloadPath, saveCohortVersion, startCohortExport } from '@/lib/services/cohorts';
import { putObject } from '@/lib/storage/s3';
import { setReferenceFilm } from '@/lib/services/readings';
import { createReferrer } from '@/lib/services/referrers';
import { sendUploadLink } from '@/lib/services/referrer-links';
import { deriveUploadLinkSecret, uploadToken } from '@/lib/referrers/upload-token';
import { calibrateFilm } from '@/lib/services/film-measure';
import { createPatient } from '@/lib/services/patients';
import { createReview } from '@/lib/services/reviews';
import { answerReply } from '@/lib/services/recall-replies';
import { acceptInvitation, inviteMember } from '@/lib/services/team';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';
import { mailbox } from './recall-fixtures';
import { drawRadiograph, filmPng } from '../support/film-fixtures';

/**
 * Issue 9 item 9: bad bytes get a 4xx, never a 500. Every route handler under app/api (found on
 * disk, so a new route is fuzzed too) and the two public forms that have no route (the patient's
 * reply form and the invitation form, through their services) get fast-check generated requests
 * against the real PostgreSQL, Redis and mail fake: random unicode, NUL and other control
 * characters, 1 MB strings, negative, huge and non-finite numbers (1e999 parses to Infinity),
 * impossible dates such as 2026-02-30, wrong JSON types — in the body fields the route's schema
 * knows, in its query parameters and in its path ids. The property: no answer is a 500.
 *
 * The session is the only thing replaced (getRequestContext answers a signed-in actor holding
 * every role); the handler, its zod parsing, the service and the database run as in production.
 * The count of requests per route is printed and written to test-results/fuzz-routes.json.
 */

const state = vi.hoisted(() => ({ context: undefined as undefined | (() => Promise<unknown>) }));
vi.mock('@/lib/auth/session', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  getRequestContext: () => state.context!(),
}));

const RUNS = Number(process.env.LAMINA_FUZZ_RUNS ?? 40);
const services = await openServices();
let actor: Actor;
const ids: Record<string, string> = {};
/** A small valid film for the upload route (each fuzz run that keeps it uploads it again: no duplicate). */
const filmPngBytes = new Uint8Array(await filmPng(drawRadiograph(40, 30, 11)));

afterAll(() => services.close());

// --- nasty values ----------------------------------------------------------------------------------

/** Placeholders replaced in the JSON text: JSON has no Infinity, but 1e999 parses to it. */
const INF = '__fuzz_inf__';
const NEG_INF = '__fuzz_neg_inf__';
const MB = 1024 * 1024;

const controlChar = fc.integer({ min: 0, max: 0x9f }).filter((c) => c < 0x20 || c >= 0x7f).map((c) => String.fromCharCode(c));
const withNul = fc.tuple(fc.string({ maxLength: 12 }), fc.string({ maxLength: 12 })).map(([a, b]) => `${a}\u0000${b}`);
const withControl = fc.tuple(fc.string({ maxLength: 12 }), controlChar, fc.string({ maxLength: 12 })).map(([a, c, b]) => `${a}${c}${b}`);
const anyUnicode = fc.string({ unit: 'binary', maxLength: 40 });
const graphemes = fc.string({ unit: 'grapheme', maxLength: 40 });
const huge = fc.constantFrom('x'.repeat(MB), 'é'.repeat(MB / 2), `${'a'.repeat(MB)}\u0000`, '\u0000'.repeat(1024));
const impossibleDate = fc.constantFrom(
  '2026-02-30',
  '2025-02-29',
  '2026-13-01',
  '2026-00-10',
  '0000-01-01',
  '9999-12-31',
  '2026-2-3',
  '30/02/2026',
  '2026-02-30T25:61:00Z',
  '2026-04-31T09:00:00+02:00',
  '+275760-09-14',
);
const numberish = fc.oneof(
  fc.integer({ min: -1e9, max: -1 }),
  fc.constantFrom(INF, NEG_INF, -0, 1e308, -1e308, 2 ** 53 + 1, 0.000001, 1.5, 99999999999),
  fc.double({ noNaN: true, noDefaultInfinity: true }),
);
const weirdString = fc.oneof(
  { weight: 4, arbitrary: withNul },
  { weight: 2, arbitrary: withControl },
  { weight: 2, arbitrary: anyUnicode },
  { weight: 1, arbitrary: graphemes },
  { weight: 1, arbitrary: huge },
  { weight: 2, arbitrary: impossibleDate },
  { weight: 1, arbitrary: fc.constantFrom('', ' ', 'NaN', 'Infinity', '-Infinity', '1e999', '-1', 'null', 'undefined', '[]', '{}', '%00', '\\u0000') },
);
/** Any JSON value a client could send, weighted to what breaks things. */
const nasty: fc.Arbitrary<unknown> = fc.oneof(
  { weight: 8, arbitrary: weirdString },
  { weight: 3, arbitrary: numberish },
  {
    weight: 1,
    arbitrary: fc.constantFrom<unknown>(null, true, false, [], {}, [null], { $ne: null }, ['\u0000'], { nested: '\u0000' }),
  },
);

// --- the specs: how to build a request for each route ---------------------------------------------

type Json = Record<string, unknown>;
interface RouteSpec {
  /** Path parameters: name → a valid value (fuzzed too). */
  params?: () => Record<string, string>;
  /** Query parameters the route reads. */
  query?: string[];
  /** Query parameters a valid request carries (fuzzed too). */
  baseQuery?: Record<string, string>;
  /** A valid body; its fields (and `fields`) are replaced by nasty values. */
  body?: () => Json;
  /** More dotted paths worth fuzzing (nested fields). */
  fields?: string[];
  /** The body is CSV text (the import). */
  csv?: boolean;
  /** The body is a multipart form (see fieldsAndFile, importFileUpload). */
  multipart?: MultipartSpec;
  /** The CSV's valid file (default: the case import's template). */
  template?: () => string;
  /** Not fuzzed here, and why. */
  skip?: string;
}

/** A multipart body: the valid form, and the fuzzed ones. */
interface MultipartSpec {
  valid: () => FormData;
  fuzzed: () => fc.Arbitrary<FormData>;
}

const PAGING = ['page', 'pageSize', 'q', 'sort', 'dir', 'archived'];
const today = new Date().toISOString().slice(0, 10);

const SPECS: Record<string, RouteSpec> = {
  'audit/route.ts#GET': { query: ['page', 'pageSize', 'action'] },
  'auth/[...nextauth]/route.ts#GET': { skip: 'next-auth’s own routes; sign-in input is fuzzed through verifyCredentials in tests/integration/sign-in.test.ts' },
  'auth/[...nextauth]/route.ts#POST': { skip: 'next-auth’s own routes (needs its request runtime)' },
  'cases/[id]/reviews/route.ts#GET': { params: () => ({ id: ids.case! }) },
  'cases/[id]/reviews/route.ts#POST': {
    params: () => ({ id: ids.case! }),
    body: () => ({ reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 1, otherFindings: 'Calm.', visitId: '' }),
  },
  'cases/[id]/route.ts#GET': { params: () => ({ id: ids.case! }) },
  'cases/[id]/route.ts#PATCH': {
    params: () => ({ id: ids.case! }),
    body: () => caseInput(ids.patient!, ids.clinician!),
    fields: ['canals.0.name', 'canals.0.workingLengthMm', 'canals.1.fillToApexMm', 'preopSymptoms.0'],
  },
  'cases/[id]/route.ts#DELETE': { params: () => ({ id: ids.case2! }) },
  'cases/[id]/visits/route.ts#GET': { params: () => ({ id: ids.case! }) },
  'cases/[id]/films/route.ts#GET': { params: () => ({ id: ids.case! }) },
  'cases/[id]/films/route.ts#POST': {
    params: () => ({ id: ids.case! }),
    multipart: fieldsAndFile(() => ({ role: 'follow_up', visitId: ids.visit! }), () => filmPngBytes),
  },
  'films/[id]/[variant]/route.ts#GET': { params: () => ({ id: ids.film!, variant: 'thumbnail' }) },
  'reading/queue/route.ts#GET': { query: ['scope'], baseQuery: { scope: 'practice' } },
  'reading/blinded/[id]/route.ts#GET': { params: () => ({ id: ids.readingFilm! }) },
  'reading/blinded/[id]/image/route.ts#GET': { params: () => ({ id: ids.readingFilm! }) },
  'reading/films/[id]/readings/route.ts#POST': {
    params: () => ({ id: ids.readingFilm2! }),
    body: () => ({ kind: 'reference-exercise', pai: 2, signs: { swelling: false } }),
    fields: ['signs.swelling', 'signs.sinusTract', 'signs.glow'],
  },
  'reading/reference/[id]/route.ts#PUT': { params: () => ({ id: ids.film! }), body: () => ({ pai: 3 }) },
  'outcomes/agreement/route.ts#GET': {},
  'cases/[id]/referrer-links/route.ts#POST': { params: () => ({ id: ids.worklistCase! }), body: () => ({ visitId: ids.worklistVisit!, days: 7 }) },
  'reviews/[id]/letter/route.ts#POST': { params: () => ({ id: ids.worklistReview! }) },
  'upload/[token]/route.ts#GET': { params: () => ({ token: ids.uploadToken! }) },
  'upload/[token]/route.ts#POST': { params: () => ({ token: ids.uploadToken! }), multipart: fieldsAndFile(() => ({}), () => filmPngBytes) },
  'films/[id]/calibration/route.ts#PUT': { params: () => ({ id: ids.film! }), body: () => ({ source: 'drawn', a: { x: 2, y: 5 }, b: { x: 38, y: 5 }, mm: 10 }) },
  'films/[id]/measurement/route.ts#PUT': {
    params: () => ({ id: ids.film! }),
    body: () => ({ diameter: { a: { x: 5, y: 5 }, b: { x: 30, y: 20 } }, outline: [{ x: 5, y: 5 }, { x: 30, y: 5 }, { x: 30, y: 20 }] }),
  },
  'cases/import/route.ts#GET': {},
  'cases/import/route.ts#POST': { query: ['mode', 'stream', 'validRowsOnly'], baseQuery: { mode: 'dry-run' }, csv: true },
  'cases/import/read/route.ts#POST': { multipart: importFileUpload() },
  'reviews/import/route.ts#GET': {},
  'reviews/import/route.ts#POST': {
    query: ['mode', 'stream', 'validRowsOnly', 'remindOverdue'],
    baseQuery: { mode: 'dry-run' },
    csv: true,
    template: () => reviewTemplateCsv().replace('clinician@lamina-demo.invalid', 'cal@fuzz.test'),
  },
  'cases/route.ts#GET': { query: [...PAGING, 'tooth', 'kind', 'operator', 'from', 'to', 'outcome', 'status', 'patientId'] },
  'cases/route.ts#POST': {
    body: () => caseInput(ids.patient!, ids.clinician!, { tooth: 46 }),
    fields: ['canals.0.name', 'canals.0.apicalSize', 'complications.0'],
  },
  'clinicians/route.ts#GET': {},
  'cohorts/route.ts#GET': {},
  'cohorts/route.ts#POST': { body: () => ({ name: 'Molars since 2022' }) },
  'cohorts/counts/route.ts#GET': { query: ['from', 'to', 'kind', 'clinicians', 'f.group', 'f.referrer', 'f.clinician'], baseQuery: { 'f.group': 'molar', clinicians: 'C1' } },
  'cohorts/[id]/route.ts#GET': { params: () => ({ id: ids.cohort! }) },
  'cohorts/[id]/versions/route.ts#POST': {
    params: () => ({ id: ids.cohort! }),
    body: () => ({ filters: { kind: 'primary_treatment', 'f.group': 'molar', clinicians: 'C1' }, variables: [], k: 5 }),
    fields: ['filters.from', 'filters.clinicians', 'filters.f.pai', 'variables.0', 'k'],
  },
  'cohorts/[id]/exports/route.ts#POST': { params: () => ({ id: ids.cohort! }), body: () => ({ version: 1 }) },
  'cohort-exports/[id]/route.ts#GET': { params: () => ({ id: ids.cohortExport! }) },
  'cohort-exports/[id]/cancel/route.ts#POST': { params: () => ({ id: ids.cohortExport! }) },
  'cohort-exports/[id]/download/route.ts#GET': {
    params: () => ({ id: ids.cohortExport! }),
    query: ['token'],
    get baseQuery() {
      return { token: ids.downloadToken ?? '' };
    },
  },
  'outcomes/overview/route.ts#GET': { query: ['from', 'to', 'clinician', 'kind', 'f.group', 'f.referrer'], baseQuery: { 'f.group': 'molar' } },
  'outcomes/factor/route.ts#GET': { query: ['from', 'to', 'clinician', 'kind', 'factor', 'endpoint', 'method', 'f.sealer', 'f.year'], baseQuery: { factor: 'sealer', 'f.pai': '4,5' } },
  'outcomes/curves/route.ts#GET': { query: ['from', 'to', 'clinician', 'kind', 'factor', 'endpoint', 'method', 'f.density'], baseQuery: { endpoint: 'tooth' } },
  'outcomes/export/route.ts#GET': { query: ['view', 'from', 'to', 'clinician', 'kind', 'factor', 'f.complications'], baseQuery: { view: 'overview' } },
  'outcomes/model/route.ts#GET': { query: ['from', 'to', 'clinician', 'kind', 'covariates', 'lesionAs', 'paiAs', 'endpoint'], baseQuery: { covariates: 'kind,lesion,pai' } },
  'outcomes/funnel/route.ts#GET': { query: ['from', 'to', 'clinician', 'kind', 'measure', 'adjust', 'format'], baseQuery: { measure: 'm12', adjust: 'adjusted' } },
  'outcomes/report/route.ts#GET': { query: ['from', 'to', 'clinician', 'kind', 'factor', 'measure', 'adjust'], baseQuery: { factor: 'kind', measure: 'latest' } },
  'outcomes/worklist/route.ts#GET': { query: ['from', 'to', 'clinician', 'kind'] },
  'outcomes/worklist/export/route.ts#GET': { query: ['from', 'to', 'clinician', 'kind'] },
  'outcomes/worklist/[id]/decisions/route.ts#GET': { params: () => ({ id: ids.worklistCase! }) },
  'outcomes/worklist/[id]/decisions/route.ts#POST': {
    params: () => ({ id: ids.worklistCase! }),
    body: () => ({ step: 'retreat', date: today, note: 'Discussed with the patient.', apicalDiagnosis: 'asymptomatic_apical_periodontitis' }),
  },
  'dev-mailbox/route.ts#GET': { query: ['id', 'to', 'limit'] },
  'health/route.ts#GET': {},
  'patients/[id]/route.ts#GET': { params: () => ({ id: ids.patient! }) },
  'patients/[id]/route.ts#PATCH': { params: () => ({ id: ids.patient! }), body: () => patientInput({ registryNumber: 'F-0001' }) },
  'patients/[id]/route.ts#DELETE': { params: () => ({ id: ids.patient2! }) },
  'patients/route.ts#GET': { query: PAGING },
  'patients/route.ts#POST': { body: () => patientInput({ registryNumber: `F-${Math.random().toString(36).slice(2, 8)}` }) },
  'practice/settings/route.ts#GET': {},
  'practice/settings/route.ts#PATCH': {
    body: () => ({ toothNotation: 'fdi' }),
    fields: ['recallPolicy', 'recallPolicy.milestones', 'recallPolicy.milestones.0.months', 'recallPolicy.timeZone'],
  },
  'recall/book/route.ts#POST': { body: () => ({ visitIds: [ids.visit!], start: `${today}T09:30:00Z`, mode: 'propose', sendNow: false, note: 'Tuesday suits.' }), fields: ['visitIds.0'] },
  'recall/mark/route.ts#POST': { body: () => ({ visitIds: [ids.visitMark!], status: 'missed', reason: 'no_show', note: 'Did not come.' }), fields: ['visitIds.0'] },
  'recall/policy/route.ts#GET': {},
  'recall/policy/route.ts#PUT': {
    body: () => ({ invitationWeeksBefore: 3, secondInvitationAfterDays: 10, lastNoticeDaysAfterDue: 14, lostAfterUnansweredAttempts: 3 }),
    fields: ['quietHours', 'quietHours.start', 'quietHours.end'],
  },
  'recall/queues/route.ts#GET': {},
  'recall/rate/route.ts#GET': { query: ['from', 'to', 'pending'] },
  'recall/send/route.ts#POST': { body: () => ({ visitIds: [ids.visit!] }), fields: ['visitIds.0'] },
  'recall/visits/[id]/contact-log/route.ts#GET': { params: () => ({ id: ids.visit! }) },
  'recall/visits/[id]/notes/route.ts#POST': { params: () => ({ id: ids.visit! }), body: () => ({ note: 'Rang, no answer.', reached: false }) },
  'recall/visits/route.ts#GET': { query: [...PAGING, 'queue', 'status', 'from', 'to', 'operator'], baseQuery: { queue: 'due_soon' } },
  'referrers/route.ts#GET': { query: PAGING },
  'referrers/[id]/route.ts#PATCH': { params: () => ({ id: ids.referrer! }), body: () => ({ practiceName: 'Harrowgate Dental' }), fields: ['email', 'name'] },
  'referrers/route.ts#POST': { body: () => ({ name: 'Dr Ilse Quarrender', practiceName: 'Harrowgate Dental', email: 'ilse@referrers.test.invalid' }) },
  'team/invitations/route.ts#POST': { body: () => ({ name: 'Noor Test', email: `n${Math.random().toString(36).slice(2, 8)}@fuzz.test`, roles: ['clinician'] }), fields: ['roles.0'] },
  'team/members/[userId]/route.ts#PATCH': { params: () => ({ userId: ids.member! }), body: () => ({ roles: ['clinician'] }), fields: ['roles.0'] },
  'team/members/route.ts#GET': {},
  'unsubscribe/[token]/route.ts#GET': { params: () => ({ token: 'x.y' }) },
  'unsubscribe/[token]/route.ts#POST': { params: () => ({ token: 'x.y' }) },
  'visits/[id]/route.ts#PATCH': { params: () => ({ id: ids.visitPatch! }), body: () => ({ bookedDate: today, note: 'Booked.' }), fields: ['status'] },
};

/** Every route file under app/api with the methods it exports. */
const ROUTE_MODULES = import.meta.glob<Record<string, unknown>>('../../app/api/**/route.ts');
const METHODS = ['GET', 'POST', 'PUT', 'PATCH', 'DELETE'] as const;

// --- building and sending a request ----------------------------------------------------------------

function setPath(target: Json, dotted: string, value: unknown) {
  const parts = dotted.split('.');
  let node: Record<string, unknown> | unknown[] = target;
  for (const [i, part] of parts.entries()) {
    const last = i === parts.length - 1;
    const key = Array.isArray(node) ? Number(part) : part;
    if (last) {
      (node as Record<string | number, unknown>)[key] = value;
      return;
    }
    const next = (node as Record<string | number, unknown>)[key];
    if (!next || typeof next !== 'object') (node as Record<string | number, unknown>)[key] = /^\d+$/.test(parts[i + 1]!) ? [] : {};
    node = (node as Record<string | number, unknown>)[key] as Record<string, unknown>;
  }
}

function jsonText(value: unknown): string {
  return JSON.stringify(value)
    .replaceAll(`"${INF}"`, '1e999')
    .replaceAll(`"${NEG_INF}"`, '-1e999');
}

const asQueryValue = (v: unknown) => (typeof v === 'string' ? v.slice(0, 4096) : v === INF ? '1e999' : v === NEG_INF ? '-1e999' : jsonText(v));

interface Fuzzed {
  params: Record<string, string>;
  query: [string, string][];
  /** A FormData body: the Request sets the multipart content type with its boundary. */
  body?: string | FormData;
  contentType: string;
}

/** A multipart form: text as fields, bytes as files. */
function formOf(entries: Record<string, string | Uint8Array>): FormData {
  const form = new FormData();
  for (const [k, v] of Object.entries(entries)) {
    if (typeof v === 'string') form.set(k, v);
    else form.set(k, new Blob([new Uint8Array(v)]), 'upload.bin');
  }
  return form;
}

/** A multipart upload: the template, nasty text or random bytes as `file`, and other fields. */
function uploadForm(file: string | Uint8Array, fields: Record<string, string> = {}): FormData {
  return formOf({ file: typeof file === 'string' ? new TextEncoder().encode(file) : file, ...fields });
}

/** Text fields and a valid `file`; up to three entries (or an unexpected one) replaced by nasty text, random or cut-short bytes. */
function fieldsAndFile(fields: () => Record<string, string>, file: () => Uint8Array): MultipartSpec {
  return {
    valid: () => formOf({ ...fields(), file: file() }),
    fuzzed: () => {
      const keys = [...Object.keys(fields()), 'file', 'unexpected'];
      const fileValue = fc.oneof(
        { weight: 2, arbitrary: fc.constant<'valid'>('valid') },
        { weight: 2, arbitrary: fc.uint8Array({ maxLength: 4096 }) },
        // A valid file cut short or with a byte changed.
        { weight: 2, arbitrary: fc.nat().map((n) => file().subarray(0, n % file().length)) },
        { weight: 1, arbitrary: weirdString.map((s) => (typeof s === 'string' ? s : String(s))) },
      );
      return fc.array(fc.tuple(fc.constantFrom(...keys), fc.oneof(nasty.map(asQueryValue), fileValue)), { maxLength: 3 }).map((changes) => {
        const form: Record<string, string | Uint8Array> = { ...fields(), file: file() };
        for (const [k, v] of changes) form[k] = v === 'valid' ? file() : v;
        return formOf(form);
      });
    },
  };
}

/** The import's file reading: `file` (the template, random bytes, a zip-like header or text) and optionally `sheet`. */
function importFileUpload(): MultipartSpec {
  return {
    valid: () => uploadForm(fuzzTemplate()),
    fuzzed: () =>
      fc
        .record({ file: fileContent, sheet: fc.option(weirdString.map((v) => (typeof v === 'string' ? v : String(v))), { nil: undefined }) })
        .map(({ file, sheet }) => uploadForm(file, sheet === undefined ? {} : { sheet })),
  };
}
const fileContent = fc.oneof(
  fc.constant(null).map(() => new TextEncoder().encode(fuzzTemplate())),
  fc.uint8Array({ maxLength: 2048 }),
  fc.uint8Array({ maxLength: 64 }).map((b) => new Uint8Array([0x50, 0x4b, 0x03, 0x04, ...b])),
  weirdString.map((v) => new TextEncoder().encode(typeof v === 'string' ? v : String(v))),
);
const optionsText = fc.oneof(
  weirdString.map((v) => (typeof v === 'string' ? v : String(v))),
  fc.array(fc.tuple(fc.constantFrom('sheet', 'dateOrder', 'decimalMark', 'columns', 'codes', 'columns.0', 'codes.kind', 'codes.kind.RCT', 'extra'), nasty), { maxLength: 3 }).map((changes) => {
    const o: Json = { dateOrder: 'ymd', decimalMark: '.', codes: {} };
    for (const [k, v] of changes) setPath(o, k, v);
    return jsonText(o);
  }),
);

function requestArbitrary(spec: RouteSpec, method: string): fc.Arbitrary<Fuzzed> {
  const baseParams = spec.params?.() ?? {};
  const paramNames = Object.keys(baseParams);
  const params = paramNames.length
    ? fc.record(Object.fromEntries(paramNames.map((n) => [n, fc.oneof(fc.constant(baseParams[n]!), weirdString.map((s) => (typeof s === 'string' ? s : String(s))))])))
    : fc.constant({});
  const queryKeys = [...new Set([...(spec.query ?? []), ...Object.keys(spec.baseQuery ?? {})])];
  const query = (queryKeys.length
    ? fc.array(fc.tuple(fc.constantFrom(...queryKeys), nasty.map(asQueryValue)), { maxLength: 4 })
    : fc.array(fc.tuple(fc.constantFrom('q', 'page', 'id'), weirdString.map(asQueryValue)), { maxLength: 1 })
  ).map((changes) => {
    const q = new Map(Object.entries(spec.baseQuery ?? {}));
    for (const [k, v] of changes) q.set(k, v);
    return [...q.entries()];
  });

  let body: fc.Arbitrary<{ body?: string | FormData; contentType: string }>;
  if (spec.multipart) {
    body = spec.multipart.fuzzed().map((form) => ({ body: form, contentType: 'multipart/form-data' }));
  } else if (spec.csv) {
    // As JSON { csv } (the route also takes text/csv), or as a multipart upload with the mapping step's options.
    body = fc.oneof(
      { weight: 3, arbitrary: csvArbitrary(spec.template ?? fuzzTemplate).map((text) => ({ body: jsonText({ csv: text }), contentType: 'application/json' })) },
      { weight: 2, arbitrary: fc.record({ file: fileContent, options: optionsText }).map(({ file, options }) => ({ body: uploadForm(file, { options }), contentType: 'multipart/form-data' })) },
    );
  } else if (method === 'GET' || method === 'DELETE') {
    body = fc.constant({ contentType: 'application/json' });
  } else {
    const base = spec.body?.() ?? {};
    const keys = [...Object.keys(base), ...(spec.fields ?? []), 'unexpected'];
    body = fc.oneof(
      {
        weight: 9,
        arbitrary: fc.array(fc.tuple(fc.constantFrom(...keys), nasty), { minLength: 0, maxLength: 3 }).map((changes) => {
          const b = structuredClone(spec.body?.() ?? {});
          for (const [k, v] of changes) setPath(b, k, v);
          return { body: jsonText(b), contentType: 'application/json' };
        }),
      },
      { weight: 1, arbitrary: nasty.map((v) => ({ body: jsonText(v), contentType: 'application/json' })) },
      { weight: 1, arbitrary: weirdString.map((s) => ({ body: typeof s === 'string' ? s : String(s), contentType: 'application/json' })) },
    );
  }
  return fc.record({ params, query, b: body }).map(({ params: p, query: q, b }) => ({ params: p, query: q, body: b.body, contentType: b.contentType }));
}

/** The import template with the fuzz practice's clinician as the operator. */
const fuzzTemplate = () => templateCsv().replace('clinician@lamina-demo.invalid', 'cal@fuzz.test');

/** The template's example row with some cells replaced by nasty text (and, sometimes, a second nasty row). */
function csvArbitrary(template: () => string): fc.Arbitrary<string> {
  const [header, example] = Papa.parse<string[]>(template().trim()).data as [string[], string[]];
  return fc
    .tuple(fc.array(fc.tuple(fc.nat({ max: header.length - 1 }), weirdString), { minLength: 1, maxLength: 4 }), fc.boolean())
    .map(([changes, twice]) => {
      const row = [...example];
      for (const [i, v] of changes) row[i] = typeof v === 'string' ? v : String(v);
      return Papa.unparse({ fields: header, data: twice ? [example, row] : [row] }, { newline: '\r\n' });
    });
}

/** The body of the last answer, and the last error the handler logged (said when it was a 5xx). */
let lastBody = '';
let lastLoggedError = '';
setLogSink((line) => {
  if (line.includes('"level":50')) lastLoggedError = line;
  process.stdout.write(line);
});
afterAll(() => setLogSink(null));

/** What a failing request's answer said: the start of its body and the error logged for it. */
function answerSaid(): string {
  let logged = '';
  try {
    if (lastLoggedError) logged = ` — logged ${JSON.stringify((JSON.parse(lastLoggedError) as { err?: unknown }).err).slice(0, 240)}`;
  } catch {
    logged = ` — logged ${lastLoggedError.slice(0, 240)}`;
  }
  return `${lastBody.slice(0, 160)}${logged}`;
}

/**
 * fc.assert, its failure said in the first line of the error: the answer's status and the start of
 * its body (a 503 "unavailable" and a 500 "internal" have different causes), which fast-check
 * keeps in the error's cause, below a counterexample that may be a megabyte long.
 */
async function assertProperty<T>(property: fc.IAsyncProperty<T>): Promise<void> {
  try {
    await fc.assert(property, { numRuns: RUNS, endOnFailure: true });
  } catch (e) {
    const cause = (e as Error).cause;
    const said = cause instanceof Error ? cause.message : String(e);
    throw new Error(said.split('\n')[0]!.slice(0, 400), { cause: e });
  }
}

const counts = new Map<string, { requests: number; statuses: Record<number, number> }>();
function count(route: string, status: number) {
  const c = counts.get(route) ?? { requests: 0, statuses: {} };
  c.requests++;
  c.statuses[status] = (c.statuses[status] ?? 0) + 1;
  counts.set(route, c);
}

async function send(fn: (req: Request, ctx: { params: Promise<unknown> }) => Promise<Response>, route: string, method: string, r: Fuzzed): Promise<number> {
  const routePath = route.split('#')[0]!.replace(/\/route\.ts$/, '');
  const url = new URL(`/api/${routePath.replace(/\[\.{0,3}(\w+)\]/g, (_, n: string) => encodeURIComponent(r.params[n] ?? 'x'))}`, env.APP_URL);
  for (const [k, v] of r.query) url.searchParams.append(k, v);
  const req = new Request(url, {
    method,
    headers: {
      ...(r.body instanceof FormData ? {} : { 'Content-Type': r.contentType }),
      Origin: new URL(env.APP_URL).origin,
      'Sec-Fetch-Site': 'same-origin',
      Accept: 'application/json',
    },
    ...(r.body !== undefined && method !== 'GET' && method !== 'DELETE' ? { body: r.body } : {}),
  });
  lastLoggedError = '';
  const res = await fn(req, { params: Promise.resolve(r.params) });
  const text = await res.text();
  lastBody = text;
  let status = res.status;
  // The import's NDJSON stream reports a failure after it began in its last line.
  if (res.headers.get('content-type')?.includes('ndjson')) {
    const last = JSON.parse(text.trim().split('\n').at(-1)!) as { type: string; status?: number };
    if (last.type === 'error') status = last.status ?? 500;
  }
  count(route, status);
  return status;
}

// --- the tests --------------------------------------------------------------------------------------

beforeAll(async () => {
  await resetData(services.orm, services.redis);
  const p = await makeRegistryPractice(services.em(), 'fuzz');
  actor = { ...p.clinician, roles: ['admin', 'coordinator', 'clinician', 'auditor', 'researcher'] };
  state.context = async () => ({ em: services.em(), actor });
  ids.clinician = p.clinician.userId;
  ids.member = p.clinician2.userId;
  const patient = await createPatient(services.em(), p.coordinator, patientInput());
  const patient2 = await createPatient(services.em(), p.coordinator, patientInput({ registryNumber: 'T-0002' }));
  ids.patient = patient.id;
  ids.patient2 = patient2.id;
  const c = await createCase(services.em(), p.clinician, caseInput(patient.id, p.clinician.userId, { completionDate: '2024-01-24' }));
  ids.case = c.id;
  ids.case2 = (await createCase(services.em(), p.clinician, caseInput(patient2.id, p.clinician.userId))).id;
  const visits = (await services.em().getKnex()('recall_visit').where({ case_id: c.id }).orderBy('milestone').select('id')) as { id: string }[];
  expect(visits.length).toBeGreaterThanOrEqual(3);
  [ids.visit, ids.visitMark, ids.visitPatch] = visits.map((v) => v.id);
  const replyCase = await createCase(services.em(), p.clinician, caseInput(patient.id, p.clinician.userId, { tooth: 37, startDate: '2024-02-01', completionDate: '2024-02-15' }));
  const replyVisit = (await services.em().getKnex()('recall_visit').where({ case_id: replyCase.id }).orderBy('milestone').first('id')) as { id: string };
  ids.replyVisit = replyVisit.id;
  // A case on the non-healing worklist (disease at its latest review), so a next step can be recorded.
  const patient3 = await createPatient(services.em(), p.coordinator, patientInput({ registryNumber: 'T-0003' }));
  const worklistCase = await createCase(services.em(), p.clinician, caseInput(patient3.id, p.clinician.userId, { tooth: 47, startDate: '2023-01-10', completionDate: '2023-01-24' }));
  ids.worklistReview = (await createReview(services.em(), p.clinician, worklistCase.id, { reviewDate: '2024-02-01', toothStatus: 'present', paiScore: 5, lesionDiameterMm: 5 })).review.id;
  ids.worklistCase = worklistCase.id;
  // Its referrer has an address: an upload link (its token for the public route) and the outcome letter.
  const referrer = await createReferrer(services.em(), p.coordinator, { name: 'Dr Fuzz Referrer', email: 'referrer@fuzz.test' });
  ids.referrer = referrer.id;
  await services.em().getKnex()('treatment_case').where({ id: worklistCase.id }).update({ referrer_id: referrer.id });
  ids.worklistVisit = ((await services.em().getKnex()('recall_visit').where({ case_id: worklistCase.id }).orderBy('milestone').first('id')) as { id: string }).id;
  ids.uploadToken = uploadToken((await sendUploadLink(services.em(), p.coordinator, worklistCase.id, { visitId: ids.worklistVisit })).linkId, deriveUploadLinkSecret(env.NEXTAUTH_SECRET));
  ids.film = (await uploadFilm(services.em(), p.clinician, c.id, { role: 'post_fill' }, filmPngBytes)).film.id;
  // A research cohort with a saved version and a finished export (its archive stored), for the researcher's routes.
  const cohort = await createCohort(services.em(), actor, { name: 'Fuzz cohort' });
  ids.cohort = cohort.id;
  await saveCohortVersion(services.em(), actor, cohort.id, { filters: { kind: 'primary_treatment' }, variables: [] });
  const exported = await startCohortExport(services.em(), actor, cohort.id, { version: 1 });
  ids.cohortExport = exported.id;
  const exportRow = (await services.em().getKnex()('cohort_export').where({ id: exported.id }).update({ status: 'done', cases: 1 }).returning(['object_key'])) as { object_key: string }[];
  await putObject({ key: exportRow[0]!.object_key, body: new Uint8Array([80, 75, 5, 6, ...new Array(18).fill(0)]), contentType: 'application/zip' });
  ids.downloadToken = new URL(downloadPath(exported.id, actor.practiceId), 'http://x').searchParams.get('token')!;
  // Two follow-up films in the reference set: the fuzz actor (every role) has a calibration-exercise task on
  // each, so the blinded routes (readingFilm) and the reading route (readingFilm2) reach their services.
  for (const [key, seed] of [['readingFilm', 21], ['readingFilm2', 22]] as const) {
    const bytes = new Uint8Array(await filmPng(drawRadiograph(40, 30, seed)));
    ids[key] = (await uploadFilm(services.em(), p.clinician, c.id, { role: 'follow_up' }, bytes)).film.id;
    await setReferenceFilm(services.em(), p.auditor, ids[key]!, { pai: 2 });
  }
  // Calibrated, so a measurement's valid request is accepted whatever the order of the routes (the film is 40 × 30 px).
  await calibrateFilm(services.em(), p.clinician, ids.film, { source: 'drawn', a: { x: 2, y: 5 }, b: { x: 38, y: 5 }, mm: 10 });
  // A real invitation, so the invitation form's fuzz reaches the database with a usable token.
  const invitee = `invitee.${Date.now()}@fuzz.test`;
  await inviteMember(services.em(), p.admin, { name: 'Invitee', email: invitee, roles: ['clinician'] });
  const [mail] = await mailbox(invitee);
  ids.invitationToken = /\/invite\/([A-Za-z0-9_-]+)/.exec(mail!.text)![1]!;
});

describe('fuzzed requests never answer 500 (issue 9 item 9)', async () => {
  const routes: { route: string; method: string; load: () => Promise<Record<string, unknown>> }[] = [];
  for (const [file, load] of Object.entries(ROUTE_MODULES)) {
    const rel = file.replace('../../app/api/', '');
    const mod = await load();
    for (const m of METHODS) if (typeof mod[m] === 'function') routes.push({ route: `${rel}#${m}`, method: m, load });
  }

  it('found the route handlers', () => {
    expect(routes.length).toBeGreaterThan(30);
  });

  // The fuzz reaches the database only if the request it starts from is valid: each spec's own
  // request must be accepted (a spec that drifted from its route fails here, not silently).
  it('every spec’s unchanged request is accepted', async () => {
    const refused: string[] = [];
    for (const { route, method, load } of routes) {
      const spec = SPECS[route];
      if (!spec || spec.skip || route.startsWith('unsubscribe/')) continue;
      const fn = (await load())[method] as (req: Request, ctx: { params: Promise<unknown> }) => Promise<Response>;
      const base: Fuzzed = {
        params: spec.params?.() ?? {},
        query: Object.entries(spec.baseQuery ?? {}),
        body: spec.multipart
          ? spec.multipart.valid()
          : spec.csv
            ? jsonText({ csv: (spec.template ?? fuzzTemplate)() })
            : method === 'GET' || method === 'DELETE'
              ? undefined
              : jsonText(spec.body?.() ?? {}),
        contentType: 'application/json',
      };
      const status = await send(fn, route, method, base);
      if (status >= 400) refused.push(`${route} → ${status}`);
    }
    expect(refused).toEqual([]);
  });

  for (const { route, method, load } of routes) {
    const spec = SPECS[route] ?? {};
    if (spec.skip) {
      it.skip(`${route} — ${spec.skip}`, () => {});
      continue;
    }
    it(`${route}${SPECS[route] ? '' : ' (generic: no spec yet)'}`, async () => {
      const fn = (await load())[method] as (req: Request, ctx: { params: Promise<unknown> }) => Promise<Response>;
      await assertProperty(
        fc.asyncProperty(requestArbitrary(spec, method), async (r) => {
          const status = await send(fn, route, method, r);
          expect(status, `${method} ${route} answered ${status}: ${answerSaid()}`).toBeLessThan(500);
        }),
      );
    });
  }

  it('the public reply form: a fuzzed note or answer never answers 500', async () => {
    const secret = deriveLinkSecret(env.NEXTAUTH_SECRET);
    await assertProperty(
      fc.asyncProperty(fc.record({ note: nasty, answer: fc.oneof(fc.constantFrom('confirmed', 'another_time', 'declined'), nasty) }), async ({ note, answer }) => {
        const { token } = issueReplyToken({ visitId: ids.replyVisit! }, secret, new Date());
        const status = await statusOf(() => answerReply(services.em(), { token, answer, note }, { ip: '127.0.0.9', userAgent: 'fuzz' }));
        count('public reply form (answerReply)', status);
        expect(status, `answerReply answered ${status}: ${answerSaid()}`).toBeLessThan(500);
      }),
    );
  });

  it('the invitation form: a fuzzed name or token never answers 500', async () => {
    await assertProperty(
      fc.asyncProperty(fc.record({ token: fc.oneof({ weight: 4, arbitrary: fc.constant(ids.invitationToken!) }, { weight: 1, arbitrary: nasty }), name: nasty }), async ({ token, name }) => {
        const status = await statusOf(() =>
          acceptInvitation(services.em(), { token, name, password: 'a-long-enough-passphrase', confirm: 'a-long-enough-passphrase' }, { ip: '127.0.0.9', userAgent: 'fuzz' }),
        );
        count('invitation form (acceptInvitation)', status);
        expect(status, `acceptInvitation answered ${status}: ${answerSaid()}`).toBeLessThan(500);
      }),
    );
  });
});

/** The status the edge would answer for a service call (errorResponse maps typed errors; anything else is 500). */
async function statusOf(call: () => Promise<unknown>): Promise<number> {
  lastLoggedError = '';
  try {
    await call();
    lastBody = '';
    return 200;
  } catch (e) {
    const answer = errorResponse(e);
    lastBody = await answer.text();
    return answer.status;
  }
}

afterAll(() => {
  const rows = [...counts.entries()].sort(([a], [b]) => a.localeCompare(b));
  const lines = rows.map(([route, c]) => `${String(c.requests).padStart(5)}  ${String(c.statuses[500] ?? 0).padStart(3)}  ${route}  ${JSON.stringify(c.statuses)}`);
  const total = rows.reduce((n, [, c]) => n + c.requests, 0);
  const fivehundreds = rows.reduce((n, [, c]) => n + (c.statuses[500] ?? 0), 0);
  console.log(`fuzzed requests per route (requests, answered 500, route, statuses):\n${lines.join('\n')}\ntotal ${total} requests over ${rows.length} routes, ${fivehundreds} answered 500`);
  const dir = path.resolve(import.meta.dirname, '../../test-results');
  mkdirSync(dir, { recursive: true });
  writeFileSync(path.join(dir, 'fuzz-routes.json'), JSON.stringify({ runsPerRoute: RUNS, total, answered500: fivehundreds, routes: Object.fromEntries(rows) }, null, 2));
});
