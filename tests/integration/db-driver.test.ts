import { createRequire } from 'node:module';
import { afterAll, describe, expect, it, vi } from 'vitest';
import { LaminaConnection } from '@/lib/db-driver';
import { isServiceUnavailable } from '@/lib/services/unavailable';
import { openServices } from '../support/db';

/**
 * lib/db-driver.ts: a transaction that ended under its callback throws the error that ended it, not
 * knex's "Transaction query already complete" for the statements and the rollback after it. Met as a
 * 500 instead of a 503 while PostgreSQL restarted under load (tests/integration/faults-database.test.ts,
 * about one run in six on a busy machine: a pooled connection the server had just ended failed its
 * BEGIN). That timing is not repeatable, so the first test hands `transactional` such a transaction;
 * the others make a real one fail: its connection ended by the server (pg_terminate_backend, as a
 * restart does) and a deferred unique constraint refusing the COMMIT.
 */
// the driver as knex loads it (CommonJS); only its client's query is watched
const pg = createRequire(import.meta.url)('pg') as { Client: { prototype: { query: (...args: unknown[]) => unknown } } };

const services = await openServices();
afterAll(() => services.close());

const execute = (sql: string) => services.em().getConnection().execute(sql);

async function thrownBy(fn: () => Promise<unknown>): Promise<Error> {
  try {
    await fn();
  } catch (e) {
    return e as Error;
  }
  throw new Error('expected a throw');
}

describe('the ORM driver (lib/db-driver.ts)', () => {
  it('is the one the configuration gives', () => {
    expect(services.orm.em.getConnection()).toBeInstanceOf(LaminaConnection);
  });

  it('a transaction whose BEGIN failed: the callback’s refused statement gives way to the connection error, and nothing is rolled back twice', async () => {
    const connection = services.orm.em.getConnection() as LaminaConnection;
    const lost = Object.assign(new Error('read ECONNRESET'), { code: 'ECONNRESET' });
    const ended = Promise.reject(lost);
    ended.catch(() => undefined);
    const trx = { isCompleted: () => true, executionPromise: ended };
    const begin = vi.spyOn(connection, 'begin').mockResolvedValueOnce(trx as never);
    const rollback = vi.spyOn(connection, 'rollback');
    try {
      const e = await thrownBy(() => connection.transactional(async () => {
        throw new Error('Transaction query already complete, run with DEBUG=knex:tx for more info');
      }));
      expect(e).toBe(lost);
      expect(isServiceUnavailable(e)).toBe(true);
      expect(rollback).not.toHaveBeenCalled();
      // a callback's own error in a live transaction is rolled back and thrown as it was
      const mine = new Error('not valid');
      expect(await thrownBy(() => connection.transactional(async () => Promise.reject(mine)))).toBe(mine);
      expect(rollback).toHaveBeenCalledTimes(1);
    } finally {
      begin.mockRestore();
      rollback.mockRestore();
    }
  });

  it('a transaction whose connection the server ends before COMMIT throws the connection error (a 503), not the refused rollback', async () => {
    const em = services.em();
    const e = await thrownBy(() =>
      em.transactional(async (tx) => {
        const [{ pid }] = await tx.getConnection().execute<{ pid: number }[]>('select pg_backend_pid() as pid', [], 'all', tx.getTransactionContext());
        await execute(`select pg_terminate_backend(${Number(pid)})`); // from another connection of the pool
      }),
    );
    expect(e.message).not.toMatch(/already complete/);
    expect(isServiceUnavailable(e)).toBe(true);
    // the pool drops the ended connection: a query after it may still meet it once (a 503 as well), the next works
    const answers: string[] = [];
    for (let i = 0; i < 3 && answers.at(-1) !== 'ok'; i++) {
      answers.push(await execute('select 1 as one').then(() => 'ok', (err: unknown) => (isServiceUnavailable(err) ? 'unavailable' : String(err))));
    }
    expect(answers.at(-1)).toBe('ok');
    expect(answers.slice(0, -1).every((a) => a === 'unavailable')).toBe(true);
  });

  it('a COMMIT refused by a deferred constraint throws that constraint’s error, and nothing is saved', async () => {
    await execute('drop table if exists driver_probe; create table driver_probe (k int unique deferrable initially deferred)');
    try {
      const e = await thrownBy(() => services.em().transactional(async (tx) => {
        await tx.getConnection().execute('insert into driver_probe (k) values (1), (1)', [], 'run', tx.getTransactionContext());
      }));
      expect(e.message).not.toMatch(/already complete/);
      expect((e as Error & { code?: string }).code).toBe('23505'); // unique_violation (PostgreSQL manual, Appendix A), as node-postgres gives it
      expect(isServiceUnavailable(e)).toBe(false);
      expect(await execute('select count(*)::int as n from driver_probe')).toEqual([{ n: 0 }]);
    } finally {
      await execute('drop table if exists driver_probe');
    }
  });

  it('a transaction sends its statements one at a time, in the order asked, even when they are asked for side by side (no queue in the driver, which pg 9 drops)', async () => {
    type PgClient = { _getActiveQuery(): unknown; _queryQueue: unknown[] };
    const busyAtSend: boolean[] = [];
    const query = pg.Client.prototype.query;
    const spy = vi.spyOn(pg.Client.prototype, 'query').mockImplementation(function (this: PgClient, ...args: unknown[]) {
      busyAtSend.push(Boolean(this._getActiveQuery()) || this._queryQueue.length > 0);
      return query.apply(this, args) as never;
    });
    const answered: number[] = [];
    try {
      const em = services.em();
      const got = await em.transactional((tx) =>
        Promise.all(
          [1, 2, 3, 4].map(async (n) => {
            const rows = await tx.getConnection().execute<{ n: number }[]>(`select pg_sleep(0.02), ${n} as n`, [], 'all', tx.getTransactionContext());
            answered.push(rows[0]!.n);
            return rows[0]!.n;
          }),
        ),
      );
      expect(got).toEqual([1, 2, 3, 4]);
    } finally {
      spy.mockRestore();
    }
    expect(answered).toEqual([1, 2, 3, 4]);
    // BEGIN, the four statements, COMMIT: each found the connection idle
    expect(busyAtSend.length).toBeGreaterThanOrEqual(6);
    expect(busyAtSend.filter(Boolean)).toEqual([]);
  });
});
