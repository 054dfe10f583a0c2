/**
 * The web process's producers: one fail-fast connection and one queue per queue name, made on first
 * use and kept on globalThis (a dev reload does not open a second connection). Used by the desk's
 * "send now" (reminders), the referrer links and letters (referrer mail) and the research exports.
 *
 * The queue is opened only once the connection is ready (BullMQ's queue asks the server for its
 * version when it is made, and a fail-fast connection would fail that for good). While Redis is
 * away every call rejects at once ('Redis is not reachable' after `timeoutMs`), and once the
 * connection is no longer ready the queue is forgotten, so the next call after Redis returns opens it again.
 */
import type { Queue } from 'bullmq';
import type { Redis } from 'ioredis';
import { connectionForProducer, whenReady } from './connection';
import type { QueueName } from './names';

export interface ProducerOptions<Q extends Queue> {
  /** The Redis URL (lib/env's REDIS_URL in the web process); read on the first call only. */
  url: string;
  /** The connection's name in Redis CLIENT LIST and log lines, e.g. 'web-reminders'. */
  name: string;
  /** Opens the queue on the ready connection (with the queue's own settings; fail-fast). */
  open: (connection: Redis) => Q;
  /** How long to wait for the connection (ms); 3 s by default. */
  timeoutMs?: number;
}

interface Producer {
  connection: Redis;
  queue?: Promise<Queue>;
}

const g = globalThis as unknown as { __laminaProducers?: Map<QueueName, Producer> };

/** The producer of `queue`: the same queue on every call while its connection is up. */
export async function producerFor<Q extends Queue>(queue: QueueName, options: ProducerOptions<Q>): Promise<Q> {
  const producers = (g.__laminaProducers ??= new Map());
  let p = producers.get(queue);
  if (!p) {
    p = { connection: connectionForProducer(options.url, { name: options.name }) };
    producers.set(queue, p);
  }
  const timeoutMs = options.timeoutMs ?? 3_000;
  p.queue ??= whenReady(p.connection, timeoutMs).then((c) => options.open(c));
  try {
    const opened = (await p.queue) as Q;
    await whenReady(p.connection, timeoutMs);
    return opened;
  } catch (e) {
    if (p.connection.status !== 'ready') p.queue = undefined;
    throw e;
  }
}
