import type { EntityManager } from '@mikro-orm/postgresql';
import type { Knex } from '@mikro-orm/knex';

/**
 * A read replica for the reads that may lag the primary by a moment: the outcomes area (issue 15).
 *
 * DATABASE_READ_URL names a PostgreSQL read replica (a managed service's reader endpoint, or a
 * streaming standby). When set, MikroORM gets it as its one replica, with `preferReadReplicas`
 * off: every ordinary read and write stays on the primary (DATABASE_URL), and only code that asks
 * for the `read` connection through {@link readKnex} goes to the replica. When unset, `readKnex`
 * is the primary. Used by lib/db.ts (web and worker) and by tests that build their own ORM.
 */
export function readReplicaOptions(readUrl: string | undefined) {
  return readUrl ? { replicas: [{ name: 'read-replica', clientUrl: readUrl }], preferReadReplicas: false } : { preferReadReplicas: false };
}

/**
 * The query builder for replica-tolerant reads: the replica when DATABASE_READ_URL is set, else the
 * primary. Inside a transaction of `em` the transaction's own connection is used (a read that is
 * part of a write must see it).
 */
export function readKnex(em: EntityManager): Knex {
  return (em.getTransactionContext<Knex.Transaction>() ?? em.getConnection('read').getKnex()) as Knex;
}
