/**
 * Coalescing of concurrent calls into one batched call (the reminder worker's outbox statements:
 * jobs/send-reminder.ts). Each job still asks for its own row; calls made while a batch is on its
 * way wait and go together in the next one, so N jobs running at once cost about one statement
 * instead of N. Nothing waits on a timer: a lone call goes on the next turn of the event loop.
 *
 * - `run(inputs)` must answer one output per input, in order.
 * - At most `maxBatch` inputs per call; at most `maxInFlight` calls at once.
 * - A batch that throws is run again one input at a time, so one bad input (or a deadlock between
 *   two batches) fails only its own caller; a batch of one passes its error on.
 */
export interface CoalesceOptions {
  maxBatch: number;
  maxInFlight?: number;
}

export function coalesce<I, O>(run: (inputs: I[]) => Promise<O[]>, options: CoalesceOptions): (input: I) => Promise<O> {
  const maxBatch = Math.max(1, Math.floor(options.maxBatch));
  const maxInFlight = Math.max(1, Math.floor(options.maxInFlight ?? 1));
  const pending: { input: I; resolve: (o: O) => void; reject: (e: unknown) => void }[] = [];
  let inFlight = 0;
  let scheduled = false;

  const runChecked = async (inputs: I[]): Promise<O[]> => {
    const out = await run(inputs);
    if (out.length !== inputs.length) throw new Error(`coalesce: ${out.length} answers for ${inputs.length} inputs`);
    return out;
  };

  const settle = async (batch: typeof pending) => {
    try {
      const out = await runChecked(batch.map((b) => b.input));
      batch.forEach((b, i) => b.resolve(out[i]!));
    } catch (e) {
      if (batch.length === 1) {
        batch[0]!.reject(e);
        return;
      }
      for (const b of batch) {
        try {
          const [o] = await runChecked([b.input]);
          b.resolve(o!);
        } catch (e1) {
          b.reject(e1);
        }
      }
    }
  };

  const flush = () => {
    scheduled = false;
    while (pending.length && inFlight < maxInFlight) {
      const batch = pending.splice(0, maxBatch);
      inFlight += 1;
      void settle(batch).finally(() => {
        inFlight -= 1;
        schedule();
      });
    }
  };

  const schedule = () => {
    if (scheduled || !pending.length || inFlight >= maxInFlight) return;
    scheduled = true;
    setImmediate(flush);
  };

  return (input: I) =>
    new Promise<O>((resolve, reject) => {
      pending.push({ input, resolve, reject });
      schedule();
    });
}
