/**
 * The seeded practice of the benches at scale (scripts/bench/outcomes.ts, scripts/bench/cohort.ts):
 * `cases` completed cases of the demo world's generator (lib/demo/cases.ts), bulk inserted
 * (lib/demo/seed-demo.ts persistWorld), then VACUUM ANALYZE. The generator is slow beyond a few
 * thousand cases, so it makes a world of 5,000 cases (3,000 patients) and this copies it, each copy k
 * moved k days earlier (every date) and with its own patients. Every clinician of the world is a user
 * `staff<i>.<slug>@bench.invalid`; one more member (the bench's actor) is made with the role given.
 *
 * Import it after runUnderScriptsTsconfig (it loads `server-only` modules), as the benches import the rest.
 */
import { performance } from 'node:perf_hooks';
import type { MikroORM } from '@mikro-orm/postgresql';
import { MembershipSchema, PracticeSchema, UserSchema } from '../../entities';
import type { Actor } from '../../lib/auth/actor';
import type { Role } from '../../lib/auth/roles';
import { generateDemoWorld, type DemoWorld } from '../../lib/demo/cases';
import { persistWorld } from '../../lib/demo/seed-demo';
import { addDaysTo, type CalendarDate } from '../../lib/registry/calendar-date';
import { DEFAULT_MIN_OBSERVATION_DAYS } from '../../lib/scoring';

/** `nCases` cases: copies of a 5,000-case demo world, copy k with every date k days earlier. */
export function replicatedWorld(nCases: number, today: CalendarDate): DemoWorld {
  const unit = Math.min(5000, nCases);
  const base = generateDemoWorld({ today, cases: unit, patients: Math.round(unit * 0.6) });
  const copies = Math.ceil(nCases / unit);
  const shift = (k: number) => <T>(v: T): T => {
    if (typeof v === 'string') return (/^\d{4}-\d{2}-\d{2}$/.test(v) ? addDaysTo(v, -k) : v) as T;
    if (Array.isArray(v)) return v.map(shift(k)) as T;
    if (v && typeof v === 'object') return Object.fromEntries(Object.entries(v).map(([key, x]) => [key, shift(k)(x)])) as T;
    return v;
  };
  const patients: DemoWorld['patients'] = [];
  const cases: DemoWorld['cases'] = [];
  for (let k = 0; k < copies; k++) {
    const f = shift(k);
    for (const p of base.patients) patients.push({ ...f(p), key: `${p.key}~${k}`, registryNumber: `${p.registryNumber}-${k}` });
    for (const c of base.cases) {
      if (cases.length >= nCases) break;
      cases.push({ ...f(c), key: `${c.key}~${k}`, patientKey: `${c.patientKey}~${k}`, previousCaseKey: c.previousCaseKey ? `${c.previousCaseKey}~${k}` : null });
    }
  }
  return { ...base, patients, cases };
}

export interface BenchPracticeOptions {
  cases: number;
  today: CalendarDate;
  name: string;
  slug: string;
  /** The bench's own user (its actor), a member with this one role. */
  member: { email: string; name: string; role: Role };
  /** Runs after the rows are written and before VACUUM ANALYZE (e.g. research consent for every patient). */
  beforeAnalyze?: (practiceId: string) => Promise<void>;
}

/** Seeds a fresh practice (see the top of this file); times in ms. */
export async function seedBenchPractice(orm: MikroORM, o: BenchPracticeOptions) {
  const em = orm.em.fork();
  const t0 = performance.now();
  const world = replicatedWorld(o.cases, o.today);
  const generationMs = performance.now() - t0;
  const practice = em.create(PracticeSchema, { name: o.name, slug: o.slug, recallPolicy: world.practice.recallPolicy });
  const made: [string, { id: string }][] = [];
  const emails = new Set([...world.staff.map((s) => s.email), ...world.clinicians]);
  for (const c of world.cases) {
    emails.add(c.operatorEmail);
    for (const v of c.visits) if (v.review) emails.add(v.review.assessorEmail);
    for (const r of c.unplannedReviews) emails.add(r.assessorEmail);
  }
  for (const [i, email] of [...emails].entries()) {
    const u = em.create(UserSchema, { email: `staff${i + 1}.${o.slug}@bench.invalid`, name: `Bench Clinician ${i + 1}` });
    made.push([email, u]);
    em.create(MembershipSchema, { user: u, practice, role: 'clinician' });
  }
  const member = em.create(UserSchema, { email: o.member.email, name: o.member.name });
  em.create(MembershipSchema, { user: member, practice, role: o.member.role });
  await em.flush();
  const seeded = await persistWorld(orm.em.fork(), practice.id, world, new Map(made.map(([email, u]) => [email, u.id])), DEFAULT_MIN_OBSERVATION_DAYS);
  await o.beforeAnalyze?.(practice.id);
  const conn = orm.em.getConnection();
  for (const t of ['patient', 'treatment_case', 'recall_visit', 'review']) await conn.execute(`vacuum analyze ${t}`);
  return { practice, member, seeded, generationMs, ms: performance.now() - t0 };
}

/** The actor a bench's service calls run as (loopback address, user agent 'bench'). */
export function benchActor(user: { id: string; email: string; name?: string | null }, practice: { id: string; name: string }, roles: Role[]): Actor {
  return { userId: user.id, email: user.email, name: user.name ?? null, practiceId: practice.id, practiceName: practice.name, roles, ip: '127.0.0.1', userAgent: 'bench' };
}
