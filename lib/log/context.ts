import { AsyncLocalStorage } from 'node:async_hooks';

/**
 * The id of the web request being handled, for code deep below it (lib/queue's enqueue carries it
 * into the jobs it queues). Set by lib/http.ts's handler(); no pino here, so lib/queue stays light.
 */
const requestStore = new AsyncLocalStorage<{ requestId: string }>();

/** Runs fn with the request id available to everything it calls (currentRequestId). */
export function withRequestId<T>(requestId: string, fn: () => T): T {
  return requestStore.run({ requestId }, fn);
}

/** The id of the web request being handled, if any. */
export function currentRequestId(): string | undefined {
  return requestStore.getStore()?.requestId;
}
