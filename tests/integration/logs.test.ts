import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import type { Actor } from '@/lib/auth/actor';
import { env } from '@/lib/env';
import { errorResponse } from '@/lib/http';
import { setLogSink } from '@/lib/log/logger';
import { todayIn } from '@/lib/services/registry-common';
import { reminderProducer } from '@/lib/services/recall-outbox';
import { makeRegistryPractice, openServices, resetData } from '../support/db';
import { clearMailbox, mailbox, seedVisits, spawnWorker, waitFor } from './recall-fixtures';

/**
 * Issue 15: structured logs (pino) with a request id from the web into the worker, and nothing that
 * identifies a patient in any line. The real route handler (handler() of lib/http.ts; only the
 * session is replaced, as in fuzz-routes) sends a reminder now; the real worker process sends it
 * to the mail fake. Then every line either wrote — the web's, caught through setLogSink, and the
 * worker's stdout and stderr — is read: JSON, the request id in both, and none of the fixture
 * patient's identifiers (given and family name, e-mail address; also not in an unexpected
 * error's message, which can quote a row's values).
 */
const state = vi.hoisted(() => ({ actor: undefined as Actor | undefined, em: undefined as unknown }));
vi.mock('@/lib/auth/session', async (importOriginal) => ({
  ...(await importOriginal<object>()),
  getRequestContext: async () => ({ em: state.em, actor: state.actor, mustChoosePractice: false }),
}));

process.env.QUEUE_PREFIX = `lamina-test-logs-${randomBytes(3).toString('hex')}`;
const services = await openServices();
const webLines: string[] = [];
const GIVEN = 'Quillonette';
const FAMILY = 'Vatterbyshire';
const EMAIL = 'quillonette.vatterbyshire@logs-fixture.invalid';

afterAll(async () => {
  setLogSink(null);
  const q = await reminderProducer();
  await q.obliterate({ force: true });
  await q.close();
  await services.close();
});

let visitId: string;
beforeAll(async () => {
  await resetData(services.orm, services.redis);
  await clearMailbox();
  const p = await makeRegistryPractice(services.em(), `logs${randomBytes(3).toString('hex')}`);
  const [v] = await seedVisits(services.em(), p.practice.id, p.clinician.userId, todayIn('Europe/London'), [{ dueIn: 10, givenName: GIVEN, familyName: FAMILY, email: EMAIL }], 'l');
  visitId = v!.visitId;
  state.actor = p.coordinator;
  state.em = services.em();
  setLogSink((line) => webLines.push(line));
}, 120_000);

function request(path: string, method: string, body?: unknown): Request {
  return new Request(new URL(path, env.APP_URL), {
    method,
    headers: { Origin: new URL(env.APP_URL).origin, 'Sec-Fetch-Site': 'same-origin', ...(body ? { 'Content-Type': 'application/json' } : {}), 'X-Request-Id': 'forged-by-a-client' },
    body: body ? JSON.stringify(body) : undefined,
  });
}

describe('structured logs (lib/log, lib/http.ts handler, jobs/worker.ts)', () => {
  it('carries the request id from the web request into the job and the worker, and writes no patient identifier', async () => {
    // A read whose query holds the patient's name, and the send.
    const patients = await import('@/app/api/patients/route');
    const list = await patients.GET(request(`/api/patients?q=${encodeURIComponent(FAMILY)}`, 'GET'), { params: Promise.resolve({}) });
    expect(list.status).toBe(200);
    const send = await import('@/app/api/recall/send/route');
    const res = await send.POST(request('/api/recall/send', 'POST', { visitIds: [visitId] }), { params: Promise.resolve({}) });
    expect(res.status, await res.clone().text()).toBe(200);
    const reqId = res.headers.get('x-request-id')!;
    // Without TRUSTED_PROXIES a client's own X-Request-Id is not taken.
    expect(reqId).toMatch(/^[0-9a-f-]{36}$/);
    // An unexpected error quoting the row (as a driver's message can) is logged without its message.
    errorResponse(new Error(`insert into patient values ('${GIVEN}', '${FAMILY}', '${EMAIL}') - duplicate key`), reqId);

    const worker = spawnWorker({ WORKER_CONCURRENCY: '2', RECALL_SCAN_ON_START: '0' });
    try {
      const withOutput = (e: unknown) => {
        throw new Error(`${(e as Error).message}; the worker wrote:\n${worker.output().slice(-3000)}`);
      };
      await waitFor('the reminder in the mail fake', async () => (await mailbox(EMAIL)).length > 0, 90_000, 250).catch(withOutput);
      // The job's line is written right after the send.
      await waitFor('the worker’s send-reminder line', async () => worker.output().includes('"msg":"send-reminder"'), 30_000, 100).catch(withOutput);
    } finally {
      worker.proc.kill('SIGTERM');
      await Promise.race([worker.exited, new Promise((r) => setTimeout(r, 20_000))]);
    }
    const workerOut = worker.output();

    // Every web line is one JSON object; the request lines say route, status and id.
    const web = webLines.map((l) => JSON.parse(l) as Record<string, unknown>);
    expect(web.find((l) => l.msg === 'request' && l.path === '/api/recall/send')).toMatchObject({ service: 'web', reqId, method: 'POST', status: 200 });
    expect(web.find((l) => l.msg === 'request' && l.path === '/api/patients')).toMatchObject({ status: 200 });
    expect(web.find((l) => l.msg === 'unexpected error')).toMatchObject({ reqId, err: { type: 'Error' } });
    // The worker's line for that job carries the web request's id.
    const jobLine = workerOut
      .split('\n')
      .filter((l) => l.startsWith('{'))
      .map((l) => JSON.parse(l) as Record<string, unknown>)
      .find((l) => l.msg === 'send-reminder' && l.reqId === reqId);
    expect(jobLine, workerOut.slice(-2000)).toMatchObject({ service: 'worker', outcome: 'sent' });

    // The mail went to the fixture's address (so the fixture is really in play); no log line holds it.
    expect(JSON.stringify(await mailbox(EMAIL))).toContain(EMAIL);
    const all = `${webLines.join('')}\n${workerOut}`;
    for (const id of [GIVEN, FAMILY, EMAIL, EMAIL.split('@')[0]!]) expect(all.toLowerCase(), `a log line holds ${id}`).not.toContain(id.toLowerCase());
  }, 240_000);
});
