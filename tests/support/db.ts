import { MikroORM, type EntityManager } from '@mikro-orm/postgresql';
import { Redis } from 'ioredis';
import config from '../../mikro-orm.config';
import { MembershipSchema, PracticeSchema, UserSchema } from '../../entities';
import { hashPassword } from '../../lib/auth/password';
import type { Actor } from '../../lib/auth/actor';
import type { Role } from '../../lib/auth/roles';

/** One ORM and one Redis client per test file, against the services `npm test` started. */
export async function openServices() {
  const orm = await MikroORM.init({ ...config, clientUrl: process.env.DATABASE_URL, pool: { min: 0, max: 4 } });
  const redis = new Redis(process.env.REDIS_URL!, { maxRetriesPerRequest: 1 });
  return {
    orm,
    redis,
    em: () => orm.em.fork(),
    async close() {
      await orm.close(true);
      redis.disconnect();
    },
  };
}

/** Empties every table the migrations made (not the migrations table) and the rate-limit keys. */
export async function resetData(orm: MikroORM, redis: Redis) {
  const tables = await orm.em
    .getConnection()
    .execute<{ tablename: string }[]>(`select tablename from pg_tables where schemaname = 'public' and tablename <> 'mikro_orm_migrations'`);
  if (tables.length) await orm.em.getConnection().execute(`truncate ${tables.map((t) => `"${t.tablename}"`).join(', ')} cascade`);
  const keys = await redis.keys('lamina:*');
  if (keys.length) await redis.del(...keys);
}

export const PASSWORD = 'correct-horse-battery';
let passwordHash: string | undefined;

/** A practice with one user per given role; returns actors ready for services. */
export async function makePractice(em: EntityManager, slug: string, people: { email: string; roles: Role[] }[]) {
  passwordHash ??= await hashPassword(PASSWORD);
  const practice = em.create(PracticeSchema, { name: `Practice ${slug}`, slug } as never);
  const users = people.map((p) => {
    const user = em.create(UserSchema, { email: p.email, name: p.email.split('@')[0], passwordHash } as never);
    for (const role of p.roles) em.create(MembershipSchema, { user, practice, role } as never);
    return { user, roles: p.roles };
  });
  await em.flush();
  const actor = (email: string): Actor => {
    const found = users.find((u) => u.user.email === email)!;
    return {
      userId: found.user.id,
      email,
      name: found.user.name ?? null,
      practiceId: practice.id,
      practiceName: practice.name,
      roles: found.roles,
      ip: '127.0.0.9',
      userAgent: 'vitest',
    };
  };
  return { practice, users, actor };
}

/**
 * A practice for the registry tests: an administrator, a coordinator, two clinicians, a
 * practice lead and a researcher, all `@<slug>.test`.
 */
export async function makeRegistryPractice(em: EntityManager, slug: string) {
  const made = await makePractice(em, slug, [
    { email: `admin@${slug}.test`, roles: ['admin'] },
    { email: `cora@${slug}.test`, roles: ['coordinator'] },
    { email: `cal@${slug}.test`, roles: ['clinician'] },
    { email: `cleo@${slug}.test`, roles: ['clinician'] },
    { email: `lead@${slug}.test`, roles: ['auditor'] },
    { email: `res@${slug}.test`, roles: ['researcher'] },
  ]);
  return {
    ...made,
    admin: made.actor(`admin@${slug}.test`),
    coordinator: made.actor(`cora@${slug}.test`),
    clinician: made.actor(`cal@${slug}.test`),
    clinician2: made.actor(`cleo@${slug}.test`),
    auditor: made.actor(`lead@${slug}.test`),
    researcher: made.actor(`res@${slug}.test`),
  };
}

/** A valid new patient (PatientCreateSchema input); invented. */
export function patientInput(change: Record<string, unknown> = {}) {
  return {
    registryNumber: 'T-0001',
    givenName: 'Wren',
    familyName: 'Ashdown',
    dateOfBirth: '1971-04-12',
    sex: 'female',
    email: 'wren.ashdown@patients.test.invalid',
    recallContact: true,
    recallChannel: 'email',
    researchUse: true,
    consentDate: '2024-01-10',
    ...change,
  };
}

/** A valid primary treatment of tooth 36 (CaseCreateSchema input) for the patient and operator. */
export function caseInput(patientId: string, operatorId: string, change: Record<string, unknown> = {}) {
  return {
    patientId,
    operatorId,
    tooth: 36,
    kind: 'primary_treatment',
    startDate: '2024-01-10',
    completionDate: '2024-01-24',
    pulpalDiagnosis: 'pulp_necrosis',
    apicalDiagnosis: 'asymptomatic_apical_periodontitis',
    paiScore: 4,
    lesionDiameterMm: 3.5,
    canals: [
      { name: 'MB', workingLengthMm: 20.5, apicalSize: 30, fillToApexMm: 0.5 },
      { name: 'ML', workingLengthMm: 20, apicalSize: 30, fillToApexMm: 1 },
      { name: 'D', workingLengthMm: 21, apicalSize: 40, fillToApexMm: 2.5 },
    ],
    fillingTechnique: 'continuous_wave',
    sealerClass: 'epoxy_resin',
    coronalRestoration: 'direct_composite',
    ...change,
  };
}
