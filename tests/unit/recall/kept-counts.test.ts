import { describe, expect, it } from 'vitest';
import { makeCountKeeper } from '@/lib/recall/kept-counts';

/** lib/recall/kept-counts.ts: the desk's counts kept a few seconds (a fake clock; the counting is a stub that counts its calls). */
function setup(max = 8) {
  let t = 1_000;
  const clock = { now: () => t, set: (v: number) => (t = v) };
  let calls = 0;
  const compute = (value: number) => async () => {
    calls++;
    return value;
  };
  return { keeper: makeCountKeeper<number>(max), clock, compute, calls: () => calls };
}

describe('kept counts', () => {
  it('answers a kept figure for maxAgeMs from the start of its counting, then counts again', async () => {
    const { keeper, clock, compute, calls } = setup();
    expect(await keeper.read('p1', 'all', 5_000, clock.now, compute(3))).toBe(3);
    clock.set(5_999);
    expect(await keeper.read('p1', 'all', 5_000, clock.now, compute(4))).toBe(3);
    expect(calls()).toBe(1);
    clock.set(6_000);
    expect(await keeper.read('p1', 'all', 5_000, clock.now, compute(4))).toBe(4);
    expect(calls()).toBe(2);
  });

  it('the age runs from when the counting started, not when it ended', async () => {
    const { keeper, clock, calls } = setup();
    await keeper.read('p1', 'all', 5_000, clock.now, async () => {
      clock.set(4_000); // a slow count: three seconds
      return 1;
    });
    clock.set(5_999);
    expect(await keeper.read('p1', 'all', 5_000, clock.now, async () => 2)).toBe(1);
    clock.set(6_000);
    expect(await keeper.read('p1', 'all', 5_000, clock.now, async () => 2)).toBe(2);
    expect(calls()).toBe(0);
  });

  it('keys and practices are kept apart; forget drops one practice’s figures only', async () => {
    const { keeper, clock, compute } = setup();
    await keeper.read('p1', 'all', 5_000, clock.now, compute(1));
    await keeper.read('p1', 'clinician-a', 5_000, clock.now, compute(2));
    await keeper.read('p2', 'all', 5_000, clock.now, compute(3));
    expect(await keeper.read('p1', 'clinician-a', 5_000, clock.now, compute(9))).toBe(2);
    clock.set(1_001);
    keeper.forget('p1', clock.now());
    clock.set(1_002);
    expect(await keeper.read('p1', 'all', 5_000, clock.now, compute(10))).toBe(10);
    expect(await keeper.read('p2', 'all', 5_000, clock.now, compute(11))).toBe(3);
  });

  it('a count that started before a forget is answered but not kept (it may miss the action)', async () => {
    const { keeper, clock } = setup();
    const slow = keeper.read('p1', 'all', 5_000, clock.now, async () => {
      keeper.forget('p1', 1_500); // the action commits while this count runs
      return 7;
    });
    expect(await slow).toBe(7);
    clock.set(1_600);
    expect(await keeper.read('p1', 'all', 5_000, clock.now, async () => 8)).toBe(8);
    clock.set(1_700);
    expect(await keeper.read('p1', 'all', 5_000, clock.now, async () => 9)).toBe(8);
  });

  it('with maxAgeMs 0 nothing is kept', async () => {
    const { keeper, clock, compute, calls } = setup();
    await keeper.read('p1', 'all', 0, clock.now, compute(1));
    expect(await keeper.read('p1', 'all', 0, clock.now, compute(2))).toBe(2);
    expect(calls()).toBe(2);
    expect(keeper.size()).toBe(0);
  });

  it('keeps at most `max` figures, the least recently used going first', async () => {
    const { keeper, clock, compute, calls } = setup(2);
    await keeper.read('p1', 'a', 5_000, clock.now, compute(1));
    await keeper.read('p1', 'b', 5_000, clock.now, compute(2));
    await keeper.read('p1', 'a', 5_000, clock.now, compute(0)); // a used again: b is now the oldest
    await keeper.read('p1', 'c', 5_000, clock.now, compute(3));
    expect(keeper.size()).toBe(2);
    expect(await keeper.read('p1', 'a', 5_000, clock.now, compute(0))).toBe(1);
    expect(await keeper.read('p1', 'b', 5_000, clock.now, compute(5))).toBe(5);
    expect(calls()).toBe(4);
  });

  it('reads that come while the figure is being counted wait for that count, not a count of their own', async () => {
    const { keeper, clock } = setup();
    let calls = 0;
    let finish: (v: number) => void = () => undefined;
    const slow = () => {
      calls++;
      return new Promise<number>((resolve) => (finish = resolve));
    };
    const first = keeper.read('p1', 'all', 5_000, clock.now, slow);
    clock.set(1_200);
    const second = keeper.read('p1', 'all', 5_000, clock.now, slow);
    const other = keeper.read('p1', 'clinician-a', 5_000, clock.now, async () => 9); // another key counts for itself
    expect(calls).toBe(1);
    finish(5);
    expect([await first, await second, await other]).toEqual([5, 5, 9]);
    // after a forget, a read does not wait for a count that started before it
    let release: (v: number) => void = () => undefined;
    clock.set(7_000);
    const before = keeper.read('p1', 'all', 5_000, clock.now, () => new Promise<number>((resolve) => (release = resolve)));
    keeper.forget('p1', 7_001);
    clock.set(7_002);
    expect(await keeper.read('p1', 'all', 5_000, clock.now, async () => 8)).toBe(8);
    release(6);
    expect(await before).toBe(6);
    // a failed count fails its waiters too, and the next read counts again
    clock.set(20_000);
    const failing = keeper.read('p1', 'all', 5_000, clock.now, () => Promise.reject(new Error('gone')));
    const waiting = keeper.read('p1', 'all', 5_000, clock.now, async () => 1);
    await expect(failing).rejects.toThrow('gone');
    await expect(waiting).rejects.toThrow('gone');
    expect(await keeper.read('p1', 'all', 5_000, clock.now, async () => 2)).toBe(2);
  });
});
