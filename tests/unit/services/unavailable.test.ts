import { describe, expect, it } from 'vitest';
import { isServiceUnavailable, RETRY_AFTER_SECONDS, UnavailableError } from '@/lib/services/unavailable';

// The shapes below are those node-postgres, knex, MikroORM and ioredis give (the codes from the
// PostgreSQL manual, Appendix A "PostgreSQL Error Codes"; the socket codes from Node's errors
// documentation). tests/integration/faults-database.test.ts meets the real ones.
const pgError = (code: string, message: string) => Object.assign(new Error(message), { code, severity: 'FATAL' });

describe('isServiceUnavailable', () => {
  it('a restarting or unreachable PostgreSQL', () => {
    expect(isServiceUnavailable(pgError('57P01', 'terminating connection due to administrator command'))).toBe(true);
    expect(isServiceUnavailable(pgError('57P03', 'the database system is starting up'))).toBe(true);
    expect(isServiceUnavailable(pgError('08006', 'connection failure'))).toBe(true);
    expect(isServiceUnavailable(Object.assign(new Error('connect ECONNREFUSED 127.0.0.1:5432'), { code: 'ECONNREFUSED' }))).toBe(true);
    expect(isServiceUnavailable(new Error('Connection terminated unexpectedly'))).toBe(true);
    expect(isServiceUnavailable(new Error('Knex: Timeout acquiring a connection. The pool is probably full.'))).toBe(true);
    // node-postgres (lib/client.js): a query on a client whose connection the server ended, and its connect timeout
    expect(isServiceUnavailable(new Error('Client was closed and is not queryable'))).toBe(true);
    expect(isServiceUnavailable(new Error('Client has encountered a connection error and is not queryable'))).toBe(true);
    expect(isServiceUnavailable(new Error('timeout expired'))).toBe(true);
    expect(isServiceUnavailable(new Error('timeout exceeded when trying to connect'))).toBe(true);
  });

  it('wrapped errors: MikroORM keeps the driver error as `previous`, others as `cause`, a refused dual-stack connect as an AggregateError', () => {
    const driver = pgError('57P01', 'terminating connection due to administrator command');
    expect(isServiceUnavailable(Object.assign(new Error('select 1 - terminating connection'), { name: 'DriverException', previous: driver }))).toBe(true);
    expect(isServiceUnavailable(new Error('write failed', { cause: Object.assign(new Error('socket hang up'), { code: 'ECONNRESET' }) }))).toBe(true);
    expect(isServiceUnavailable(new AggregateError([Object.assign(new Error('a'), { code: 'ECONNREFUSED' })], ''))).toBe(true);
  });

  it('Redis down (ioredis)', () => {
    expect(isServiceUnavailable(new Error('Connection is closed.'))).toBe(true);
    expect(isServiceUnavailable(Object.assign(new Error('Reached the max retries per request limit'), { name: 'MaxRetriesPerRequestError' }))).toBe(true);
  });

  it('not the request’s own faults or bugs: those stay 4xx or 500', () => {
    expect(isServiceUnavailable(pgError('23505', 'duplicate key value violates unique constraint'))).toBe(false);
    expect(isServiceUnavailable(pgError('42P01', 'relation "x" does not exist'))).toBe(false);
    expect(isServiceUnavailable(new TypeError('Cannot read properties of undefined'))).toBe(false);
    expect(isServiceUnavailable(new Error('the visit’s timeout expired'))).toBe(false); // only node-postgres' own whole message
    expect(isServiceUnavailable(null)).toBe(false);
    expect(isServiceUnavailable('ECONNREFUSED')).toBe(false);
    const loop: { message: string; cause?: unknown } = { message: 'x' };
    loop.cause = loop;
    expect(isServiceUnavailable(loop)).toBe(false);
  });

  it('UnavailableError is a 503 "unavailable" with a retry hint', () => {
    const e = new UnavailableError();
    expect([e.status, e.code, e.retryAfterSeconds]).toEqual([503, 'unavailable', RETRY_AFTER_SECONDS]);
    expect(e.message).toMatch(/Nothing was saved/);
  });
});
