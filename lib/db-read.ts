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

/** A query read through a server-side cursor (openCursor). */
export interface CursorRead<T> {
  /** the rows, `fetchRows` at a time: the first page (already fetched) first; ends after a short page */
  pages: AsyncGenerator<T[], void, undefined>;
  /** ends the read-only transaction (at most once; also done when `pages` ends or is left early) */
  close: () => Promise<void>;
}

/**
 * ONE query read through a cursor (`name`: a plain SQL identifier) in a read-only transaction, `fetchRows` rows at a time, so a long
 * download or export holds a page, not every row, and the query is planned and run once. The
 * transaction's settings (`set local …`) come first; the first page is fetched before this returns,
 * so a database that does not answer is an error here, not halfway through a stream. The connection
 * is held until the last page is read or the reader stops (`pages.return()` or `close()`); a reader
 * that stops reading for `idleTimeout` loses it (PostgreSQL ends the idle transaction).
 */
export async function openCursor<T>(
  knex: Knex,
  query: { sql: string; bindings: readonly Knex.RawBinding[] },
  o: { name: string; fetchRows: number; idleTimeout: string; settings?: string },
): Promise<CursorRead<T>> {
  const trx = await knex.transaction(undefined, { readOnly: true });
  let closed = false;
  // read only: commit or roll back, nothing is kept either way; a commit after a failure would fail too
  const end = async (ok: boolean) => {
    if (closed) return;
    closed = true;
    await (ok ? trx.commit() : trx.rollback()).catch(() => undefined);
  };
  const fetch = async () => (await trx.raw(`fetch ${Math.floor(o.fetchRows)} from ${o.name}`)).rows as T[];
  let first: T[];
  try {
    await trx.raw(`set local idle_in_transaction_session_timeout = '${o.idleTimeout}'${o.settings ? `; ${o.settings}` : ''}`);
    await trx.raw(`declare ${o.name} no scroll cursor for ${query.sql}`, query.bindings as Knex.RawBinding[]);
    first = await fetch();
  } catch (e) {
    await end(false);
    throw e;
  }
  async function* pages(): AsyncGenerator<T[], void, undefined> {
    try {
      let page = first;
      first = []; // not held here while the reader works on it
      for (;;) {
        if (page.length) yield page;
        if (page.length < o.fetchRows) break;
        page = await fetch();
      }
      await end(true);
    } finally {
      await end(false);
    }
  }
  return { pages: pages(), close: () => end(false) };
}
