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
