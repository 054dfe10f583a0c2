/**
 * Redis connections for BullMQ, one kind per role. The URL is passed in (from lib/env.ts in the
 * web process, from the worker's own configuration in jobs/), so this module runs in any process.
 *
 * - Worker: `maxRetriesPerRequest: null`, as BullMQ requires for its blocking commands; while
 *   Redis is away the worker waits and reconnects instead of failing its jobs.
 * - Producer (web requests, the desk's "send now"): fails fast — no offline queue, one retry per
 *   command, a short connect timeout — so a request errors at once instead of hanging when Redis
 *   is down. Use it with {@link PRODUCER_QUEUE_OPTIONS} (`skipWaitingForReady`).
 * Both log their errors (never the URL, which may carry a password); an ioredis client without
 * an 'error' listener would crash the process on the first reconnect.
 */
import { Redis } from 'ioredis';

export interface ConnectionOptions {
  /** Shown in Redis CLIENT LIST and in log lines, e.g. 'worker' or 'web'. */
  name?: string;
  /** Where errors go; console.error by default. */
  log?: (message: string) => void;
}

const defaultLog = (message: string) => console.error(message);

function watch(client: Redis, role: string, options: ConnectionOptions): Redis {
  const log = options.log ?? defaultLog;
  let last = '';
  client.on('error', (err: Error) => {
    // Reconnect attempts repeat the same error; say it once per change.
    if (err.message === last) return;
    last = err.message;
    log(`[redis ${role}] ${err.message}`);
  });
  client.on('ready', () => {
    last = '';
  });
  return client;
}

export function connectionForWorker(url: string, options: ConnectionOptions = {}): Redis {
  const name = options.name ?? 'worker';
  const client = new Redis(url, {
    maxRetriesPerRequest: null,
    enableReadyCheck: true,
    connectionName: `lamina-${name}`,
    // Back off up to 5 s between reconnects; never give up.
    retryStrategy: (times) => Math.min(250 * 2 ** Math.min(times, 5), 5_000),
  });
  return watch(client, name, options);
}

export function connectionForProducer(url: string, options: ConnectionOptions = {}): Redis {
  const name = options.name ?? 'producer';
  const client = new Redis(url, {
    maxRetriesPerRequest: 1,
    enableOfflineQueue: false,
    connectTimeout: 2_000,
    connectionName: `lamina-${name}`,
  });
  return watch(client, name, options);
}

/** Waits until `client` is ready, or rejects after `timeoutMs`. */
export async function whenReady(client: Redis, timeoutMs = 2_000): Promise<Redis> {
  if (client.status === 'ready') return client;
  await new Promise<void>((resolve, reject) => {
    const timer = setTimeout(() => {
      client.off('ready', onReady);
      reject(new Error('Redis is not reachable'));
    }, timeoutMs);
    const onReady = () => {
      clearTimeout(timer);
      resolve();
    };
    client.once('ready', onReady);
  });
  return client;
}

/**
 * Redis's eviction policy. BullMQ needs 'noeviction' (an evicted key is a lost job); null when
 * the server does not allow CONFIG (some hosted services), in which case check the console.
 */
export async function evictionPolicy(client: Redis): Promise<string | null> {
  try {
    const reply = (await client.config('GET', 'maxmemory-policy')) as unknown;
    return Array.isArray(reply) && typeof reply[1] === 'string' ? reply[1] : null;
  } catch {
    return null;
  }
}
