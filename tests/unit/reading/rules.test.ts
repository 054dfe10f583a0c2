import { describe, expect, it } from 'vitest';
import {
  calibration,
  filmReadingState,
  filmShareBucket,
  firstReadingMeansDisease,
  inSecondReadingShare,
  needsAdjudication,
  needsSecondReading,
  readerPairAgreement,
  type FilmReadingRow,
} from '@/lib/reading/rules';
import { cohenKappa } from '@/lib/stats';

const id = (i: number) => `00000000-0000-4000-8000-${String(i).padStart(12, '0')}`;

describe('second-reading share (hash of the film id)', () => {
  it('is reproducible and close to the share over many films', () => {
    const ids = Array.from({ length: 5000 }, (_, i) => id(i));
    expect(ids.map((f) => filmShareBucket(f))).toEqual(ids.map((f) => filmShareBucket(f)));
    const chosen = ids.filter((f) => inSecondReadingShare(f, 20)).length / ids.length;
    // a fair hash puts about 20% in the share; 5000 films: ±3 points is > 5 SE (binomial, common practice)
    expect(chosen).toBeGreaterThan(0.17);
    expect(chosen).toBeLessThan(0.23);
  });
  it('0% chooses none, 100% all; a larger share keeps the films of a smaller one', () => {
    const ids = Array.from({ length: 300 }, (_, i) => id(i));
    expect(ids.some((f) => inSecondReadingShare(f, 0))).toBe(false);
    expect(ids.every((f) => inSecondReadingShare(f, 100))).toBe(true);
    for (const f of ids) if (inSecondReadingShare(f, 10)) expect(inSecondReadingShare(f, 30)).toBe(true);
    expect(() => inSecondReadingShare(id(1), 101)).toThrow(RangeError);
  });
  it('every disease goes to a second reader whatever the share', () => {
    const outside = Array.from({ length: 50 }, (_, i) => id(i)).find((f) => !inSecondReadingShare(f, 20))!;
    expect(needsSecondReading(outside, 20, false)).toBe(false);
    expect(needsSecondReading(outside, 20, true)).toBe(true);
    expect(needsSecondReading(outside, 0, true)).toBe(true);
  });
});

describe('a first reading that means disease (lib/scoring assessRecordedReview; Ørstavik 1986 cut-off PAI ≥ 3)', () => {
  const c = { completionDate: '2025-01-10', baselinePai: 4 };
  it('lesion larger than at baseline is disease; smaller is not', () => {
    expect(firstReadingMeansDisease({ case: c, filmDate: '2026-02-01', pai: 5, signs: {} })).toBe(true);
    expect(firstReadingMeansDisease({ case: c, filmDate: '2026-02-01', pai: 3, signs: {} })).toBe(false);
  });
  it('a new lesion after a healthy baseline is disease; a healthy film with a sinus tract is disease', () => {
    expect(firstReadingMeansDisease({ case: { ...c, baselinePai: 1 }, filmDate: '2026-02-01', pai: 3, signs: {} })).toBe(true);
    expect(firstReadingMeansDisease({ case: c, filmDate: '2026-02-01', pai: 1, signs: { sinusTract: true } })).toBe(true);
    expect(firstReadingMeansDisease({ case: c, filmDate: '2026-02-01', pai: 1, signs: {} })).toBe(false);
  });
  it('unchanged lesion: uncertain before the minimum observation time, disease after', () => {
    expect(firstReadingMeansDisease({ case: c, filmDate: '2025-06-01', pai: 4, signs: {} })).toBe(false);
    expect(firstReadingMeansDisease({ case: c, filmDate: '2026-06-01', pai: 4, signs: {} })).toBe(true);
  });
  it('a case not completed, or a film before completion, is not judged', () => {
    expect(firstReadingMeansDisease({ case: { completionDate: null, baselinePai: 1 }, filmDate: '2026-02-01', pai: 5, signs: {} })).toBe(false);
    expect(firstReadingMeansDisease({ case: c, filmDate: '2024-12-01', pai: 5, signs: {} })).toBe(false);
  });
});

describe('adjudication and the agreed score (Lamina rule: one PAI step tolerated)', () => {
  it('more than one step apart needs adjudication', () => {
    expect(needsAdjudication(2, 3)).toBe(false);
    expect(needsAdjudication(3, 3)).toBe(false);
    expect(needsAdjudication(2, 4)).toBe(true);
    expect(needsAdjudication(5, 1)).toBe(true);
  });
  const r = (kind: FilmReadingRow['kind'], readerId: string, pai: number, at: string): FilmReadingRow => ({ kind, readerId, pai, at });
  it('walks awaiting-first → awaiting-second → awaiting-adjudication → agreed, keeping the earliest of each kind', () => {
    const yes = () => true;
    expect(filmReadingState([], yes).status).toBe('awaiting-first');
    const one = [r('first', 'a', 2, '2026-01-01T10:00:00Z')];
    expect(filmReadingState(one, yes)).toMatchObject({ status: 'awaiting-second', firstReaderId: 'a' });
    expect(filmReadingState(one, () => false)).toMatchObject({ status: 'agreed', agreedPai: 2, basis: 'first' });
    const close = [...one, r('second', 'b', 3, '2026-01-02T10:00:00Z')];
    expect(filmReadingState(close, yes)).toMatchObject({ status: 'agreed', agreedPai: 2, basis: 'first-within-one-step', secondReaderId: 'b' });
    const far = [...one, r('second', 'b', 4, '2026-01-02T10:00:00Z')];
    expect(filmReadingState(far, yes)).toMatchObject({ status: 'awaiting-adjudication', agreedPai: null });
    const settled = [...far, r('adjudication', 'c', 4, '2026-01-03T10:00:00Z'), r('adjudication', 'd', 2, '2026-01-04T10:00:00Z')];
    expect(filmReadingState(settled, yes)).toMatchObject({ status: 'agreed', agreedPai: 4, basis: 'adjudication' });
  });
});

describe('agreement per reader pair', () => {
  it('orders each pair by reader id, computes linear and quadratic kappa on 1–5 equal to cohenKappa (Cohen 1968)', () => {
    const films = [
      [1, 1], [2, 2], [3, 4], [4, 4], [5, 3], [2, 1], [3, 3], [4, 5], [1, 2], [5, 5], [2, 3],
    ].map(([a, b], i) => (i % 2 ? { first: { readerId: 'zed', pai: b! }, second: { readerId: 'amy', pai: a! } } : { first: { readerId: 'amy', pai: a! }, second: { readerId: 'zed', pai: b! } }));
    const [pair] = readerPairAgreement(films);
    expect(pair!.readers).toEqual(['amy', 'zed']);
    expect(pair!.n).toBe(11);
    const pairs = films.map((f) => (f.first.readerId === 'amy' ? [f.first.pai, f.second.pai] : [f.second.pai, f.first.pai]) as [number, number]);
    expect(pair!.linear!.kappa).toBeCloseTo(cohenKappa(pairs, { weights: 'linear', scale: [1, 2, 3, 4, 5] }).kappa, 12);
    expect(pair!.quadratic!.kappa).toBeCloseTo(cohenKappa(pairs, { weights: 'quadratic', scale: [1, 2, 3, 4, 5] }).kappa, 12);
    expect(pair!.linear!.lower).toBeLessThan(pair!.linear!.kappa);
    expect(pair!.linear!.upper).toBeGreaterThan(pair!.linear!.kappa);
  });
  it('one score throughout: kappa undefined, said in words', () => {
    const [pair] = readerPairAgreement([
      { first: { readerId: 'a', pai: 2 }, second: { readerId: 'b', pai: 2 } },
      { first: { readerId: 'b', pai: 2 }, second: { readerId: 'a', pai: 2 } },
    ]);
    expect(pair!.linear).toBeNull();
    expect(pair!.note).toMatch(/undefined/);
  });
  it('a single film gives no kappa (not a kappa of 0 with a zero-width interval), said in words', () => {
    const [pair] = readerPairAgreement([{ first: { readerId: 'a', pai: 2 }, second: { readerId: 'b', pai: 3 } }]);
    expect(pair!.n).toBe(1);
    expect(pair!.linear).toBeNull();
    expect(pair!.quadratic).toBeNull();
    expect(pair!.note).toBe('Kappa needs at least 2 films read by both.');
  });
});

describe('calibration exercise against the reference set', () => {
  const reference = new Map([['f1', 1], ['f2', 3], ['f3', 5], ['f4', 2]]);
  it('takes each film’s latest exercise reading, ignores films not in the set, flags after a year', () => {
    const ex = [
      { filmId: 'f1', pai: 2, at: '2025-01-01T09:00:00Z' },
      { filmId: 'f1', pai: 1, at: '2025-03-01T09:00:00Z' },
      { filmId: 'f2', pai: 3, at: '2025-03-01T09:00:00Z' },
      { filmId: 'f3', pai: 4, at: '2025-03-02T09:00:00Z' },
      { filmId: 'f4', pai: 2, at: '2025-03-02T09:00:00Z' },
      { filmId: 'other', pai: 5, at: '2025-03-03T09:00:00Z' },
    ];
    const r = calibration('amy', reference, ex, '2025-06-01');
    expect(r.n).toBe(4);
    expect(r.lastExercise).toBe('2025-03-02');
    expect(r.due).toBe(false);
    expect(r.linear!.kappa).toBeCloseTo(cohenKappa([[1, 1], [3, 3], [5, 4], [2, 2]], { weights: 'linear', scale: [1, 2, 3, 4, 5] }).kappa, 12);
    expect(calibration('amy', reference, ex, '2026-03-03').due).toBe(true);
    expect(calibration('bob', reference, [], '2025-06-01')).toMatchObject({ n: 0, due: true, lastExercise: null });
  });
});
