import { AbstractSqlDriver, PostgreSqlConnection, PostgreSqlPlatform, type Configuration, type Knex } from '@mikro-orm/postgresql';

type TransactionOptions = NonNullable<Parameters<PostgreSqlConnection['transactional']>[1]>;

/**
 * MikroORM's PostgreSQL driver with one change: a transaction that ended under its callback (its
 * BEGIN, a statement or its COMMIT failed on the connection) throws the error that ended it.
 *
 * Why: knex marks such a transaction complete and rejects it with the driver's error. Every later
 * statement of the callback, and the rollback MikroORM's `transactional` then tries, is refused with
 * "Transaction query already complete" — and that refusal is what `transactional` threw. So a
 * request whose connection PostgreSQL had just ended (a restart: "terminating connection due to
 * administrator command", ECONNRESET) got a 500 instead of the 503 with a retry hint that
 * lib/services/unavailable.ts gives a connection error. The server has already rolled such a
 * transaction back (its connection is gone, or its COMMIT failed), so there is nothing left to undo.
 * Met in tests/integration/faults-database.test.ts; checked by tests/integration/db-driver.test.ts.
 */
export class LaminaConnection extends PostgreSqlConnection {
  /**
   * A transaction's statements are sent one at a time. A transaction is one connection, which runs
   * one statement at a time anyway; reads written side by side (`Promise.all`, for the pool) that
   * run inside one would otherwise be queued by the driver itself, which node-postgres deprecates
   * ("Calling client.query() when the client is already executing a query", removed in pg 9).
   */
  override async begin(options: Parameters<PostgreSqlConnection['begin']>[0] = {}): Promise<Knex.Transaction> {
    const trx = await super.begin(options);
    oneStatementAtATime(trx);
    return trx;
  }

  override async transactional<T>(cb: (trx: Knex.Transaction) => Promise<T>, options: TransactionOptions = {}): Promise<T> {
    const trx = await this.begin(options);
    try {
      const ret = await cb(trx);
      await this.commit(trx, options.eventBroadcaster, options.loggerContext);
      return ret;
    } catch (error) {
      if (trx.isCompleted()) throw await endedBy(trx, error);
      await this.rollback(trx, options.eventBroadcaster, options.loggerContext);
      throw error;
    }
  }
}

/**
 * Chains the statements of one knex transaction: each is handed to the connection when the one
 * before it has answered (or failed), in the order they were asked for. knex gives every
 * transaction its own client object; its `_query` is the step that sends a statement on the
 * connection, after knex's own checks (the transaction not yet complete), and only that object's is
 * wrapped.
 */
function oneStatementAtATime(trx: Knex.Transaction): void {
  type Send = (connection: unknown, statement: unknown) => Promise<unknown>;
  const client = (trx as unknown as { client: { _query: Send } }).client;
  const send = client._query;
  let previous: Promise<unknown> = Promise.resolve();
  client._query = function (this: unknown, connection: unknown, statement: unknown) {
    const sent = previous.then(() => send.call(this, connection, statement));
    previous = sent.catch(() => undefined);
    return sent;
  };
}

/** What ended a completed knex transaction (its execution promise's rejection), else `fallback`. */
async function endedBy(trx: Knex.Transaction, fallback: unknown): Promise<unknown> {
  const execution = (trx as Knex.Transaction & { executionPromise?: Promise<unknown> }).executionPromise;
  if (!execution) return fallback;
  return execution.then(
    () => fallback,
    (e: unknown) => e ?? fallback,
  );
}

/** PostgreSqlDriver (the same platform and connector) with LaminaConnection for the primary and any read replica. */
export class LaminaPostgreSqlDriver extends AbstractSqlDriver<LaminaConnection, PostgreSqlPlatform> {
  constructor(config: Configuration) {
    super(config, new PostgreSqlPlatform(), LaminaConnection, ['knex', 'pg']);
  }
}
