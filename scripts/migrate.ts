/** Applies the committed migrations (npm start, npm test). Never a schema update. */
import { MikroORM } from '@mikro-orm/postgresql';
import config from '../mikro-orm.config';

const orm = await MikroORM.init(config);
try {
  const migrator = orm.getMigrator();
  const pending = await migrator.getPendingMigrations();
  await migrator.up();
  console.log(pending.length ? `migrated: ${pending.map((m) => m.name).join(', ')}` : 'migrations: up to date');
} finally {
  await orm.close(true);
}
