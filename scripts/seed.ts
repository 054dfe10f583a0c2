/**
 * Seeds the invented demo practice (idempotent: a second run changes nothing) and prints the
 * demo sign-ins. Everything here is invented; no real person, practice or case.
 */
import { MikroORM } from '@mikro-orm/postgresql';
import config from '../mikro-orm.config';
import { seedDemo, DEMO_PASSWORD } from '../lib/demo/seed-demo';

const orm = await MikroORM.init(config);
try {
  const result = await seedDemo(orm.em.fork());
  console.log(`demo practice: ${result.practiceName}${result.created ? ' (created)' : ' (already there)'}`);
  console.log('demo sign-ins (password for all: ' + DEMO_PASSWORD + '):');
  for (const u of result.users) console.log(`  ${u.role.padEnd(12)} ${u.email}`);
} finally {
  await orm.close(true);
}
