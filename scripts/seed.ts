/**
 * Seeds the invented demo practice (idempotent: a second run changes nothing) and prints the
 * demo sign-ins. Everything here is invented; no real person, practice or case.
 *
 * The seed writes through the registry services' row builders, which are `server-only`
 * modules: run under scripts/tsconfig.json (`npm run seed`), where that guard is an empty
 * module. Started any other way (`tsx scripts/seed.ts`), it runs itself again that way.
 */
import { runUnderScriptsTsconfig } from './lib/scripts-tsconfig';

await runUnderScriptsTsconfig(import.meta.url);

const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: config } = await import('../mikro-orm.config');
const { seedDemo, DEMO_PASSWORD } = await import('../lib/demo/seed-demo');

const orm = await MikroORM.init(config);
try {
  const started = Date.now();
  const result = await seedDemo(orm.em.fork());
  console.log(`demo practice: ${result.practiceName}${result.created ? ' (created)' : ' (already there)'}`);
  const r = result.registry;
  const statuses = Object.entries(r.visitsByStatus)
    .map(([s, n]) => `${s} ${n}`)
    .join(', ');
  console.log(
    r.seeded
      ? `demo registry: ${r.patients} patients, ${r.cases} cases, ${r.visits} visits (${statuses}), ${r.reviews} reviews — written in ${Date.now() - started} ms`
      : `demo registry: already there (${r.patients} patients, ${r.cases} cases, ${r.visits} visits, ${r.reviews} reviews)`,
  );
  if (result.films.films) console.log(`demo films: ${result.films.films} films (drawn), ${result.films.readings} readings`);
  console.log('demo sign-ins (password for all: ' + DEMO_PASSWORD + '):');
  for (const u of result.users) console.log(`  ${u.role.padEnd(12)} ${u.email}`);
  console.log(`second practice: ${result.second.practiceName} (${result.second.cases} cases); its sign-ins:`);
  for (const u of result.second.users) console.log(`  ${u.role.padEnd(12)} ${u.email}`);
} finally {
  await orm.close(true);
}
