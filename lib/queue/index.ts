/** Queues and jobs: names, payloads, connections, options and enqueueing, defined once. */
export * from './names';
export * from './payloads';
export * from './connection';
export * from './options';
export * from './enqueue';
export * from './producer';
