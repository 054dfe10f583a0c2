import { MikroORM } from '@mikro-orm/postgresql';
import config from '../../mikro-orm.config';

/**
 * Runs once before the integration project: applies the committed migrations to the test
 * database (scripts/test.sh started PostgreSQL and Redis and exported their URLs).
 */
export default async function setup() {
  if (!process.env.DATABASE_URL || !process.env.REDIS_URL) {
    throw new Error('Integration tests need DATABASE_URL and REDIS_URL: run them through `npm test`.');
  }
  const orm = await MikroORM.init({ ...config, clientUrl: process.env.DATABASE_URL });
  try {
    await orm.getMigrator().up();
  } finally {
    await orm.close(true);
  }
}
