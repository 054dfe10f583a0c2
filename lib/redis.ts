import 'server-only';
import { Redis } from 'ioredis';
import { env } from './env';

/**
 * The web process's Redis connection (rate limits now, the queue producer later). It fails
 * fast: a command while Redis is down errors at once instead of queueing forever.
 */
const g = globalThis as unknown as { __laminaRedis?: Redis };

export function redis(): Redis {
  if (!g.__laminaRedis) {
    const client = new Redis(env.REDIS_URL, {
      maxRetriesPerRequest: 1,
      enableOfflineQueue: false,
      connectTimeout: 2_000,
      lazyConnect: false,
    });
    client.on('error', (err) => {
      if (process.env.NODE_ENV !== 'test') console.error(`[redis] ${err.message}`);
    });
    g.__laminaRedis = client;
  }
  return g.__laminaRedis;
}

/** Waits (briefly) for the connection; used before the first command after start. */
export async function redisReady(timeoutMs = 2_000): Promise<Redis> {
  const client = redis();
  if (client.status === 'ready') return client;
  await new Promise<void>((resolve, reject) => {
    const t = setTimeout(() => reject(new Error('Redis is not reachable')), timeoutMs);
    client.once('ready', () => {
      clearTimeout(t);
      resolve();
    });
  });
  return client;
}
