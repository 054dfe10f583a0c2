/**
 * The storage sweep by hand (issue 15, faults): the same sweep the worker runs every hour
 * (lib/services/storage-sweep.ts) — objects with no row and rows whose objects never arrived,
 * older than the grace period, are removed. Prints counts only (no keys or ids).
 *
 *   npm run storage-sweep [-- --grace-minutes N] [--dry-run] [--force]
 *
 * --dry-run lists and counts, removes nothing; --force removes even above the safety share
 * (lib/storage/orphans.ts: more than half of a practice's old objects or rows). Needs
 * DATABASE_URL and the S3_* settings (lib/env.ts), as the app and the worker do.
 */
import { parseArgs } from 'node:util';
import { runUnderScriptsTsconfig } from './lib/scripts-tsconfig';

await runUnderScriptsTsconfig(import.meta.url);

const { values } = parseArgs({
  args: process.argv.slice(2),
  options: { 'grace-minutes': { type: 'string' }, 'dry-run': { type: 'boolean', default: false }, force: { type: 'boolean', default: false } },
});
const minutes = values['grace-minutes'] === undefined ? undefined : Number(values['grace-minutes']);
if (minutes !== undefined && (!Number.isInteger(minutes) || minutes < 1 || minutes > 7 * 24 * 60)) {
  console.error('storage-sweep: --grace-minutes is a whole number of minutes from 1 to 10080');
  process.exit(2);
}

const { MikroORM } = await import('@mikro-orm/postgresql');
const { default: config } = await import('../mikro-orm.config');
const { sweepStorage } = await import('../lib/services/storage-sweep');

const orm = await MikroORM.init(config);
try {
  const summary = await sweepStorage(orm.em.fork(), {
    ...(minutes ? { graceMs: minutes * 60_000 } : {}),
    dryRun: values['dry-run'],
    force: values.force,
    log: (m) => console.log(m),
  });
  if (summary.refusedPractices) console.log('some removals were held back (more than half of a practice\'s files or records): check the store and the database, then run again with --force');
} finally {
  await orm.close(true);
}
