import net from 'node:net';
import { afterAll, describe, expect, it } from 'vitest';
import { MikroORM } from '@mikro-orm/postgresql';
import config from '../../mikro-orm.config';
import { PracticeSchema } from '@/entities';
import { readReplicaOptions } from '@/lib/db-read';
import { createCase } from '@/lib/services/cases';
import { readOutcomeCases } from '@/lib/services/outcomes';
import { createPatient } from '@/lib/services/patients';
import { caseInput, makeRegistryPractice, openServices, patientInput, resetData } from '../support/db';

/**
 * Issue 15: DATABASE_READ_URL routes the outcomes reads (readOutcomeCases) to a read replica and
 * nothing else. The "replica" here is a TCP relay in front of the test's PostgreSQL that counts
 * the bytes it carries: the same data, so the figures match, and a way to see which reads went
 * through it.
 */
const services = await openServices();
afterAll(() => services.close());

/** A TCP relay to the test database: counts connections and bytes. */
async function relay() {
  const target = new URL(process.env.DATABASE_URL!);
  const counts = { connections: 0, bytes: 0 };
  const sockets = new Set<net.Socket>();
  const server = net.createServer((client) => {
    counts.connections += 1;
    const upstream = net.connect(Number(target.port), target.hostname);
    for (const s of [client, upstream]) {
      sockets.add(s);
      s.on('data', (d: Buffer) => (counts.bytes += d.length));
      s.on('error', () => {});
      s.on('close', () => sockets.delete(s));
    }
    client.pipe(upstream).pipe(client);
  });
  await new Promise<void>((r) => server.listen(0, '127.0.0.1', r));
  const port = (server.address() as net.AddressInfo).port;
  const url = new URL(process.env.DATABASE_URL!);
  url.port = String(port);
  return {
    url: url.toString(),
    counts,
    close: () => new Promise<void>((r) => {
      for (const s of sockets) s.destroy();
      server.close(() => r());
    }),
  };
}

const ormWith = (readUrl: string | undefined) =>
  MikroORM.init({ ...config, clientUrl: process.env.DATABASE_URL, pool: { min: 0, max: 2 }, ...readReplicaOptions(readUrl) });

async function world() {
  await resetData(services.orm, services.redis);
  const w = await makeRegistryPractice(services.em(), 'replica');
  const patient = await createPatient(services.em(), w.clinician, patientInput());
  await createCase(services.em(), w.clinician, caseInput(patient.id, w.clinician.userId));
  return w;
}

describe('DATABASE_READ_URL: the outcomes reads go to the read replica (issue 15)', () => {
  it('with a replica, readOutcomeCases reads through it and ordinary reads stay on the primary', async () => {
    const w = await world();
    const r = await relay();
    const orm = await ormWith(r.url);
    try {
      expect(r.counts.bytes).toBe(0);
      const practice = await orm.em.fork().findOneOrFail(PracticeSchema, { id: w.practice.id });
      expect(practice.id).toBe(w.practice.id);
      expect(r.counts.bytes).toBe(0); // an entity read is not routed to the replica
      const rows = await readOutcomeCases(orm.em.fork(), w.practice.id);
      expect(rows).toHaveLength(1);
      expect(r.counts.connections).toBeGreaterThan(0);
      expect(r.counts.bytes).toBeGreaterThan(0);
      // The same rows as the primary gives.
      expect(rows).toEqual(await readOutcomeCases(services.em(), w.practice.id));
    } finally {
      await orm.close(true);
      await r.close();
    }
  });

  it('with a replica that is down, the outcomes read fails (it really goes there) while the primary answers', async () => {
    const w = await world();
    const r = await relay();
    const deadUrl = r.url;
    await r.close(); // nothing listens there any more
    const orm = await ormWith(deadUrl);
    try {
      expect((await orm.em.fork().findOneOrFail(PracticeSchema, { id: w.practice.id })).id).toBe(w.practice.id);
      await expect(readOutcomeCases(orm.em.fork(), w.practice.id)).rejects.toThrow();
    } finally {
      await orm.close(true);
    }
  });

  it('without DATABASE_READ_URL, the outcomes read uses the primary', async () => {
    const w = await world();
    const orm = await ormWith(undefined);
    try {
      expect(readReplicaOptions(undefined)).toEqual({ preferReadReplicas: false });
      expect(await readOutcomeCases(orm.em.fork(), w.practice.id)).toHaveLength(1);
    } finally {
      await orm.close(true);
    }
  });
});
