import { randomUUID } from 'node:crypto';
import type { EntityManager } from '@mikro-orm/postgresql';
import {
  MembershipSchema,
  PatientSchema,
  PracticeSchema,
  RecallVisitSchema,
  ReferrerSchema,
  ReviewSchema,
  TreatmentCaseSchema,
  UserSchema,
} from '../../entities';
import { hashPassword } from '../auth/password';
import type { Role } from '../auth/roles';
import type { VisitStatus } from '../recall/status';
import type { ReviewSign } from '../schemas/review';
import { caseColumns } from '../services/cases';
import { patientColumns } from '../services/patients';
import { bulkInsert, todayIn } from '../services/registry-common';
import { computeOutcome } from '../services/reviews';
import { DEFAULT_MIN_OBSERVATION_DAYS } from '../scoring';
import { visitSummary } from '../services/visits';
import { DEMO_EXTRA_CLINICIANS, generateDemoWorld, type DemoReview, type DemoWorld } from './cases';
import { DEMO_LOCUM, DEMO_PASSWORD, DEMO_PRACTICE, DEMO_PRACTICE_B, DEMO_USERS, DEMO_USERS_B } from './people';

import { seedDemoFilms } from './films';

export { DEMO_LOCUM, DEMO_PASSWORD, DEMO_PRACTICE, DEMO_PRACTICE_B, DEMO_USERS, DEMO_USERS_B };

/** Everyone who can sign in to the demo practice: one user per role, and the three extra clinicians. */
export const DEMO_STAFF = [...DEMO_USERS, ...DEMO_EXTRA_CLINICIANS.filter((c) => !DEMO_USERS.some((u) => u.email === c.email))];

export interface SeedResult {
  practiceName: string;
  created: boolean;
  practiceId: string;
  users: { email: string; role: string }[];
  /** The registry world: written on the first run only (a practice that has cases is left alone). */
  registry: { seeded: boolean; patients: number; cases: number; visits: number; reviews: number; visitsByStatus: Record<string, number> };
  /** Demo films (lib/demo/films.ts) written on this run, and their readings: none when the practice had films. */
  films: { films: number; readings: number };
  /** The second practice (its own people and a small registry), and the locum who works in both. */
  second: { practiceName: string; users: { email: string; role: string }[]; cases: number };
}

type Staff = { email: string; name: string; roles: readonly Role[] };

/**
 * Creates what is missing of the demo practice, its users and its invented registry
 * (lib/demo/cases.ts: 760 completed cases over five years, visits in every status, reviews
 * whose outcomes the scoring rules compute), then the same for a small second practice; the
 * locum clinician belongs to both. Never duplicates: a second run adds nothing. Bulk inserts
 * in one transaction.
 */
export async function seedDemo(em: EntityManager): Promise<SeedResult> {
  const hash = await hashPassword(DEMO_PASSWORD);
  const a = await seedPractice(em, DEMO_PRACTICE, [...DEMO_STAFF, DEMO_LOCUM], hash);
  const registry: SeedResult['registry'] = { seeded: false, patients: 0, cases: 0, visits: 0, reviews: 0, visitsByStatus: {} };
  const practice = a.practice;
  if ((await em.count(TreatmentCaseSchema, { practice: practice.id })) === 0) {
    const world = generateDemoWorld({ today: todayIn(practice.timeZone) });
    practice.recallPolicy = world.practice.recallPolicy;
    await em.flush();
    Object.assign(registry, await persistWorld(em, practice.id, world, a.userIds, practice.minObservationDays ?? DEFAULT_MIN_OBSERVATION_DAYS), { seeded: true });
  } else {
    registry.patients = await em.count(PatientSchema, { practice: practice.id });
    registry.cases = await em.count(TreatmentCaseSchema, { practice: practice.id });
    registry.visits = await em.count(RecallVisitSchema, { practice: practice.id });
    registry.reviews = await em.count(ReviewSchema, { practice: practice.id });
  }

  const films = await seedDemoFilms(em, { id: practice.id, name: practice.name });

  const b = await seedPractice(em, DEMO_PRACTICE_B, [...DEMO_USERS_B, DEMO_LOCUM], hash);
  if ((await em.count(TreatmentCaseSchema, { practice: b.practice.id })) === 0) {
    const world = generateDemoWorld({ today: todayIn(b.practice.timeZone), seed: 20261202, patients: 12, cases: 16 });
    b.practice.recallPolicy = world.practice.recallPolicy;
    await em.flush();
    // The generated world names the first practice's clinicians: the second practice's clinician
    // and the locum treat its cases instead.
    const clinicians = [b.userIds.get(demoClinicianB())!, b.userIds.get(DEMO_LOCUM.email)!];
    const ids = new Map(world.staff.map((s, i) => [s.email, clinicians[i % clinicians.length]!]));
    await persistWorld(em, b.practice.id, world, ids, b.practice.minObservationDays ?? DEFAULT_MIN_OBSERVATION_DAYS);
  }
  return {
    practiceName: practice.name,
    created: a.created,
    practiceId: practice.id,
    users: a.users,
    registry,
    films,
    second: { practiceName: b.practice.name, users: b.users, cases: await em.count(TreatmentCaseSchema, { practice: b.practice.id }) },
  };
}

const demoClinicianB = () => DEMO_USERS_B.find((u) => u.roles.includes('clinician'))!.email;

/** The practice and its people (accepted members), created when missing. */
async function seedPractice(em: EntityManager, def: { slug: string; name: string }, people: readonly Staff[], hash: string) {
  let created = false;
  let practice = await em.findOne(PracticeSchema, { slug: def.slug });
  if (!practice) {
    practice = em.create(PracticeSchema, { ...def });
    created = true;
  }
  const existing = await em.find(UserSchema, { email: { $in: people.map((u) => u.email) } });
  const memberships = created ? [] : await em.find(MembershipSchema, { practice: practice.id });
  const users: { email: string; role: string }[] = [];
  const staff = people.map((u) => {
    const found = existing.find((e) => e.email === u.email);
    const user = found ?? (em.create(UserSchema, { email: u.email, name: u.name, passwordHash: hash, emailVerified: new Date() }));
    for (const role of u.roles) {
      if (!found || !memberships.some((m) => m.user.id === found.id && m.role === role)) {
        em.create(MembershipSchema, { user, practice, role });
      }
    }
    users.push({ email: u.email, role: u.roles.join('+') });
    return { email: u.email, user };
  });
  await em.flush();
  return { practice, created, users, userIds: new Map(staff.map((s) => [s.email, s.user.id])) };
}

const SIGNS: readonly ReviewSign[] = ['painOnBiting', 'tenderToPercussion', 'tenderToPalpation', 'spontaneousPain', 'swelling', 'sinusTract', 'mobility'];
const noon = (date: string) => new Date(`${date}T12:00:00Z`);

export async function persistWorld(em: EntityManager, practiceId: string, world: DemoWorld, userIds: Map<string, string>, minObservationDays: number) {
  const referrerIds = new Map(world.referrers.map((r) => [r.key, randomUUID()]));
  const caseIds = new Map(world.cases.map((c) => [c.key, randomUUID()]));
  const patientIds = new Map(world.patients.map((p) => [p.key, randomUUID()]));
  const now = new Date();
  const clinicianId = (email: string) => {
    const id = userIds.get(email);
    if (!id) throw new Error(`Demo world names an unknown clinician: ${email}`);
    return id;
  };
  const referrers = world.referrers.map((r) => ({
    id: referrerIds.get(r.key)!,
    practice: practiceId,
    name: r.name,
    practiceName: r.practiceName,
    email: r.email,
    createdAt: now,
  }));
  const patients = world.patients.map((p) => ({
    id: patientIds.get(p.key)!,
    practice: practiceId,
    ...patientColumns(p),
    consentRecordedBy: null,
    createdAt: noon(p.consentDate),
    updatedAt: noon(p.consentDate),
  }));
  const cases: Record<string, unknown>[] = [];
  const visits: Record<string, unknown>[] = [];
  const reviews: Record<string, unknown>[] = [];
  const visitsByStatus: Record<string, number> = {};

  const review = (caseId: string, c: DemoWorld['cases'][number], r: DemoReview, visitId: string | null) => {
    const signs: Partial<Record<ReviewSign, boolean>> = {};
    if (r.toothStatus !== 'extracted') for (const s of SIGNS) if (r[s] !== undefined) signs[s] = r[s]!;
    const a = computeOutcome({
      baselinePai: c.data.paiScore,
      completionDate: c.data.completionDate,
      reviewDate: r.reviewDate,
      toothStatus: r.toothStatus,
      paiScore: r.toothStatus === 'extracted' ? null : (r.paiScore ?? null),
      signs,
      minObservationDays,
    });
    reviews.push({
      id: randomUUID(),
      practice: practiceId,
      case: caseId,
      visit: visitId,
      assessor: clinicianId(r.assessorEmail),
      reviewDate: r.reviewDate,
      daysSinceCompletion: a.daysSinceTreatment,
      toothStatus: r.toothStatus,
      paiScore: r.toothStatus === 'extracted' ? null : (r.paiScore ?? null),
      lesionDiameterMm: r.toothStatus === 'extracted' ? null : (r.lesionDiameterMm ?? null),
      signs,
      otherFindings: null,
      eventDate: r.eventDate ?? null,
      extractionReason: r.extractionReason ?? null,
      outcome: a.outcome,
      successStrict: a.successStrict,
      successLenient: a.successLenient,
      outcomeReasons: a.reasons,
      createdAt: noon(r.reviewDate),
      updatedAt: noon(r.reviewDate),
    });
  };

  for (const c of world.cases) {
    const id = caseIds.get(c.key)!;
    cases.push({
      id,
      practice: practiceId,
      ...caseColumns({
        ...c.data,
        patientId: patientIds.get(c.patientKey)!,
        operatorId: clinicianId(c.operatorEmail),
        referrerId: c.referrerKey ? referrerIds.get(c.referrerKey) : undefined,
      }),
      ...visitSummary(c.visits),
      previousCase: c.previousCaseKey ? caseIds.get(c.previousCaseKey)! : null,
      source: 'demo',
      createdAt: noon(c.data.completionDate),
      updatedAt: noon(c.data.completionDate),
    });
    for (const v of c.visits) {
      const visitId = randomUUID();
      const last = v.history[v.history.length - 1]!;
      const status = v.status as VisitStatus;
      visitsByStatus[status] = (visitsByStatus[status] ?? 0) + 1;
      const attendedOn = v.history.find((h) => h.status === 'attended')?.on ?? null;
      visits.push({
        id: visitId,
        practice: practiceId,
        case: id,
        milestone: v.milestone,
        dueDate: v.dueDate,
        windowStart: v.windowStart,
        windowEnd: v.windowEnd,
        status,
        bookedDate: attendedOn ?? (status === 'confirmed' ? (v.dueDate > world.today ? v.dueDate : v.windowEnd) : null),
        reinviteNeeded: false,
        lostToFollowUp: status === 'closed',
        closedOn: status === 'closed' ? last.on : null,
        note: null,
        statusChangedAt: noon(last.on),
        createdAt: noon(c.data.completionDate),
        updatedAt: noon(last.on),
      });
      if (v.review) review(id, c, v.review, visitId);
    }
    for (const r of c.unplannedReviews) review(id, c, r, null);
  }

  await em.transactional(async (tx) => {
    await bulkInsert(tx, ReferrerSchema, referrers);
    await bulkInsert(tx, PatientSchema, patients);
    await bulkInsert(tx, TreatmentCaseSchema, cases);
    await bulkInsert(tx, RecallVisitSchema, visits, 5000);
    await bulkInsert(tx, ReviewSchema, reviews);
  });
  return { patients: patients.length, cases: cases.length, visits: visits.length, reviews: reviews.length, visitsByStatus };
}
