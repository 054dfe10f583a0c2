import 'server-only';
import { MikroORM, type EntityManager } from '@mikro-orm/postgresql';
import config from '@/mikro-orm.config';
import { env } from './env';
import { readReplicaOptions } from './db-read';

/**
 * The ORM, created once per process and cached on globalThis so dev reloads do not open a
 * second pool. Every request or job works in its own fork (`requestEm`).
 */
const g = globalThis as unknown as { __laminaOrm?: Promise<MikroORM> };

export function getOrm(): Promise<MikroORM> {
  g.__laminaOrm ??= MikroORM.init({ ...config, clientUrl: env.DATABASE_URL, ...readReplicaOptions(env.DATABASE_READ_URL) });
  return g.__laminaOrm;
}

/** A fresh EntityManager fork with its own identity map: one per request, action or job. */
export async function requestEm(): Promise<EntityManager> {
  const orm = await getOrm();
  return orm.em.fork();
}
