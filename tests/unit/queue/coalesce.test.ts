import { describe, expect, it } from 'vitest';
import { coalesce } from '@/jobs/coalesce';

// jobs/coalesce.ts (Lamina's own): calls made while a batch is on its way go together in the next
// one; a failing batch is run again one input at a time.

/** A run that records each batch it was given and answers when released. */
function recorder(fail: (input: number) => boolean = () => false) {
  const batches: number[][] = [];
  const gates: (() => void)[] = [];
  const run = async (inputs: number[]) => {
    batches.push([...inputs]);
    await new Promise<void>((r) => gates.push(r));
    if (inputs.some(fail)) throw new Error(`bad input in ${inputs.join(',')}`);
    return inputs.map((i) => i * 10);
  };
  /** Releases every batch waiting now, until `done` settles. */
  const drain = async <T>(done: Promise<T>): Promise<T> => {
    let settled = false;
    void done.finally(() => (settled = true)).catch(() => {});
    const deadline = Date.now() + 5_000;
    while (!settled && Date.now() < deadline) {
      for (const g of gates.splice(0)) g();
      await new Promise((r) => setImmediate(r));
    }
    return done;
  };
  return { batches, run, drain };
}

describe('coalesce', () => {
  it('sends calls made in one turn as one batch, each caller getting its own answer', async () => {
    const r = recorder();
    const call = coalesce(r.run, { maxBatch: 10 });
    const answers = await r.drain(Promise.all([1, 2, 3].map(call)));
    expect(answers).toEqual([10, 20, 30]);
    expect(r.batches).toEqual([[1, 2, 3]]);
  });

  it('holds calls made while a batch is out and sends them together next, at most maxBatch each', async () => {
    const r = recorder();
    const call = coalesce(r.run, { maxBatch: 2 });
    const first = call(1);
    await new Promise((res) => setImmediate(res)); // batch [1] is out, not answered
    const later = [2, 3, 4, 5, 6].map(call);
    const answers = await r.drain(Promise.all([first, ...later]));
    expect(answers).toEqual([10, 20, 30, 40, 50, 60]);
    expect(r.batches).toEqual([[1], [2, 3], [4, 5], [6]]);
  });

  it('runs a failing batch again one by one: only the bad input fails', async () => {
    const r = recorder((i) => i === 2);
    const call = coalesce(r.run, { maxBatch: 10 });
    const settled = await r.drain(Promise.allSettled([1, 2, 3].map(call)));
    expect(settled.map((s) => s.status)).toEqual(['fulfilled', 'rejected', 'fulfilled']);
    expect(settled[0]).toMatchObject({ value: 10 });
    expect(settled[1]).toMatchObject({ reason: { message: 'bad input in 2' } });
    expect(r.batches).toEqual([[1, 2, 3], [1], [2], [3]]);
  });

  it('passes the error of a batch of one on as it is', async () => {
    const r = recorder(() => true);
    const call = coalesce(r.run, { maxBatch: 10 });
    await expect(r.drain(call(7))).rejects.toThrow('bad input in 7');
    expect(r.batches).toEqual([[7]]);
  });

  it('refuses an answer of the wrong length (each input, run alone, then fails too)', async () => {
    const call = coalesce(async (inputs: number[]) => inputs.slice(1), { maxBatch: 10 });
    const settled = await Promise.allSettled([1, 2].map(call));
    expect(settled.every((s) => s.status === 'rejected')).toBe(true);
  });
});
