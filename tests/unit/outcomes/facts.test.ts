import { describe, expect, it } from 'vitest';
import {
  applyFilter,
  AT_RISK_MONTHS,
  competingEvent,
  curves,
  FACTORS,
  healingObservation,
  isDue,
  isLenientSuccess,
  isStrictSuccess,
  kmOf,
  lostAt,
  milestoneDays,
  MILESTONES,
  outcomeAt,
  outcomeAtMilestone,
  overview,
  rate,
  stepAt,
  SURVIVAL_YEARS,
  toothLossObservations,
  toothLossStarts,
  turnbullOrNull,
  TURNBULL_MAX,
  windowDays,
  COMPLETENESS_WARNING,
  type FollowUpPoint,
  type OutcomeCase,
  type OutcomeFilter,
  type Overview,
} from '@/lib/outcomes';
import { rowFacts, rowFactsInSlices, selectionIn } from '@/lib/outcomes/facts';
import { createRandom } from '@/lib/demo/random';
import { addDaysTo, type CalendarDate } from '@/lib/registry/calendar-date';
import type { Interval, RecordedReview } from '@/lib/scoring';
import { cumulativeIncidence, logRank } from '@/lib/stats';
import { outcomeCase } from '../../support/outcome-cases';

/**
 * The overview reads the per-case facts of lib/outcomes/facts.ts (columns per rows array) instead of
 * asking each case object. Checked against the definitions of lib/outcomes/cases.ts applied case by
 * case (the overview as it was computed before the columns), on a seeded world with follow-on cases
 * on the same teeth, for selections made by applyFilter (positions remembered), other arrays of the
 * same case objects, and copies of the objects (facts of their own).
 */
const TODAY: CalendarDate = '2026-06-30';

function world(seed: number, n: number): OutcomeCase[] {
  const r = createRandom(seed);
  const rows: OutcomeCase[] = [];
  for (let i = 0; i < n; i++) {
    // some cases follow an earlier case of the same tooth (a retreatment), completed after it
    const earlier = i > 10 && r.chance(0.15) ? rows[r.int(0, i - 1)]! : null;
    let done = addDaysTo(TODAY, -r.int(30, 6 * 365));
    if (earlier && done <= earlier.completionDate) done = addDaysTo(earlier.completionDate, r.int(1, 400));
    if (done > TODAY) continue;
    const reviews: RecordedReview[] = [];
    let day = 0;
    for (let v = r.int(0, 4); v > 0; v--) {
      day += r.int(120, 500);
      if (addDaysTo(done, day) > TODAY) break;
      const terminal = r.chance(0.08);
      const status = terminal ? (['extracted', 'retreated', 'surgery'] as const)[r.int(0, 2)]! : 'present';
      reviews.push({ reviewDate: addDaysTo(done, day), toothStatus: status, paiScore: terminal ? null : r.int(1, 5), signs: r.chance(0.1) ? { sinusTract: true } : {}, eventDate: terminal && r.chance(0.5) ? addDaysTo(done, day - 10) : null });
      if (terminal) break;
    }
    rows.push(
      outcomeCase({
        id: `c${i}`,
        patientId: earlier ? earlier.patientId : `p${r.int(0, Math.floor(n * 0.6))}`,
        operatorId: `u${r.int(1, 4)}`,
        kind: earlier ? 'nonsurgical_retreatment' : 'primary_treatment',
        completionDate: done,
        baselinePai: r.int(1, 5),
        previousCaseId: earlier ? earlier.id : null,
        openVisit: r.chance(0.3),
        reviews,
      }),
    );
  }
  // cases on the day they become due for each milestone (and the day before), reviewed or not
  for (const m of MILESTONES)
    for (const d of [0, 1])
      for (const reviewed of [false, true]) {
        const done = addDaysTo(TODAY, -(milestoneDays(m) + windowDays(m) - d));
        rows.push(outcomeCase({ id: `due${m}-${d}-${reviewed}`, patientId: `due${m}`, completionDate: done, openVisit: true, reviews: reviewed ? [{ reviewDate: addDaysTo(done, milestoneDays(m)), toothStatus: 'present', paiScore: 1, signs: {} }] : [] }));
      }
  return rows.sort((a, b) => (a.completionDate < b.completionDate ? -1 : a.completionDate > b.completionDate ? 1 : 0));
}

/** The overview from the definitions of cases.ts, case by case. */
function overviewByDefinition(selection: readonly OutcomeCase[], all: readonly OutcomeCase[], today: CalendarDate, minObs: number): Overview {
  const completeness = [12, 24].map((months) => {
    const due = selection.filter((c) => isDue(c, months, today));
    return { months, rate: rate(due.filter((c) => outcomeAtMilestone(c, months, minObs) !== null).length, due.length) };
  });
  const success = [...MILESTONES, 'latest' as const].map((at: FollowUpPoint) => {
    let n = 0, strict = 0, lenient = 0, uncertain = 0, missing = 0;
    for (const c of selection) {
      const o = outcomeAt(c, at, minObs);
      if (o === null) missing += lostAt(c, at, today, minObs) ? 1 : 0;
      else if (o === 'uncertain') uncertain += 1;
      else {
        n += 1;
        strict += isStrictSuccess(o) ? 1 : 0;
        lenient += isLenientSuccess(o) ? 1 : 0;
      }
    }
    const bounds = (x: number) => (n + missing === 0 ? { best: null, worst: null } : { best: (x + missing) / (n + missing), worst: x / (n + missing) });
    return { at, strict: rate(strict, n), lenient: rate(lenient, n), uncertain, missing, strictBounds: bounds(strict), lenientBounds: bounds(lenient) };
  });
  const lost = selection.filter((c) => lostAt(c, 'latest', today, minObs));
  const intervals = toothLossObservations(selection, all, minObs);
  const km = kmOf(intervals);
  const tb = intervals.length > 0 && intervals.length <= TURNBULL_MAX ? turnbullOrNull(intervals) : null;
  return {
    today,
    cases: selection.length,
    reviewed: selection.filter((c) => c.reviews.length > 0).length,
    lost: rate(lost.length, selection.filter((c) => isDue(c, 12, today)).length),
    lostStillInvited: lost.filter((c) => c.openVisit).length,
    completeness,
    warning: completeness.some((c) => c.rate.n > 0 && (c.rate.estimate ?? 0) < COMPLETENESS_WARNING),
    success,
    teeth: intervals.length,
    toothLossEvents: intervals.filter((i) => i.right !== null).length,
    turnbullComputed: tb !== null,
    survival: SURVIVAL_YEARS.map((years) => {
      const days = milestoneDays(years * 12);
      const k = stepAt(km, (s) => s.time, days);
      const t = stepAt(tb ?? [], (s) => s.upper, days);
      return {
        years,
        days,
        km: { survival: k?.survival ?? 1, lower: k?.lower ?? 1, upper: k?.upper ?? 1, nRisk: intervals.filter((i) => (i.right ?? i.left) >= days).length },
        turnbull: tb !== null ? (t?.survival ?? 1) : null,
      };
    }),
  };
}

describe('the overview on the per-case facts (lib/outcomes/facts.ts)', () => {
  const rows = world(12, 600);
  const filters: OutcomeFilter[] = [{}, { clinician: 'u2' }, { kind: 'nonsurgical_retreatment' }, { from: addDaysTo(TODAY, -3 * 365), to: addDaysTo(TODAY, -365) }, { levels: { pai: ['4', '5'] } }];

  it('gives the figures of the definitions, case by case, for every filter, today and minimum observation time', () => {
    // the world is not trivial: lost cases, lost teeth, teeth followed across a later case in and out of the selection
    const all = overviewByDefinition(rows, rows, TODAY, 365);
    expect(all.lost.x).toBeGreaterThan(0);
    expect(all.toothLossEvents).toBeGreaterThan(0);
    expect(all.teeth).toBeLessThan(rows.length);
    for (const minObs of [365, 200])
      for (const today of [TODAY, '2025-01-15'])
        for (const f of filters) {
          const selection = applyFilter(rows, f);
          expect(overview(selection, rows, today, minObs), JSON.stringify({ f, today, minObs })).toEqual(overviewByDefinition(selection, rows, today, minObs));
        }
  });

  it('the same figures for a selection by applyFilter, another array of the same cases and copies of the cases', () => {
    for (const f of filters) {
      const selection = applyFilter(rows, f);
      const expected = overview(selection, rows, TODAY, 365);
      expect(overview([...selection], rows, TODAY, 365)).toEqual(expected);
      expect(overview(selection.map((c) => ({ ...c })), rows, TODAY, 365)).toEqual(expected);
    }
  });

  it('finds each selected case at its place among the rows, and builds the facts once per rows array and minimum observation time', () => {
    const selection = applyFilter(rows, { clinician: 'u3' });
    const s = selectionIn(selection, rows, 365);
    expect(s.facts).toBe(rowFacts(rows, 365));
    expect([...s.at].map((k) => rows[k])).toEqual(selection);
    expect(selectionIn([...selection].reverse(), rows, 365).at).toEqual(s.at.slice().reverse());
    expect(rowFacts(rows, 365)).toBe(s.facts);
    expect(rowFacts(rows, 200)).not.toBe(s.facts);
    // a selection changed after applyFilter (sorted in place) is found case by case, not by the positions remembered
    const changed = applyFilter(rows, { clinician: 'u3' }).reverse();
    expect([...selectionIn(changed, rows, 365).at].map((k) => rows[k])).toEqual(changed);
    const copies = selection.map((c) => ({ ...c }));
    const own = selectionIn(copies, rows, 365);
    expect(own.facts.cases).toBe(copies);
  });

  it('built in slices with a pause between them (the warmer), the facts are those of rowFacts, and kept for the rows', async () => {
    const fresh = [...rows]; // a new rows array: no facts kept for it yet
    let pauses = 0;
    const sliced = await rowFactsInSlices(fresh, 365, async () => void pauses++, 64);
    expect(pauses).toBe(Math.ceil(fresh.length / 64));
    expect(rowFacts(fresh, 365)).toBe(sliced); // kept: the views read these
    const whole = rowFacts([...rows], 365); // built in one piece on another array of the same cases
    expect({ ...sliced, cases: null, position: null }).toEqual({ ...whole, cases: null, position: null });
    // facts kept already: returned at once, without a pause
    expect(await rowFactsInSlices(fresh, 365, async () => void pauses++, 64)).toBe(sliced);
    expect(pauses).toBe(Math.ceil(fresh.length / 64));
    // a reader that builds them while the slices run (rowFacts, in one piece): its facts are kept, and returned
    const raced = [...rows];
    let theirs: ReturnType<typeof rowFacts> | null = null;
    const mine = await rowFactsInSlices(raced, 365, async () => void (theirs ??= rowFacts(raced, 365)), 100);
    expect(mine).toBe(theirs);
    expect(rowFacts(raced, 365)).toBe(theirs);
  });
});

/**
 * The curves read the same facts (healing and tooth-loss observations, their Kaplan–Meier
 * observations, the competing events) by position. Checked against the definitions applied to each
 * level's case objects (the curves as computed before the columns): cases.ts healingObservation and
 * toothLossObservations, kmOf, the log-rank test and the cumulative incidence on each case's competingEvent.
 */
describe('the survival curves on the per-case facts', () => {
  const rows = world(21, 700);
  const levelsOf = (selection: readonly OutcomeCase[], factor: 'kind' | 'group' | null) => {
    const groups = new Map<string, OutcomeCase[]>();
    for (const c of selection) {
      const k = factor ? FACTORS[factor].level(c) : 'All cases';
      groups.set(k, [...(groups.get(k) ?? []), c]);
    }
    return groups;
  };

  it('gives the figures of the definitions per level, for both endpoints, with and without a stratum, for every kind of selection', () => {
    for (const f of [{}, { clinician: 'u2' }, { kind: 'nonsurgical_retreatment' }] as OutcomeFilter[])
      for (const endpoint of ['healing', 'tooth'] as const)
        for (const [factor, stratum] of [[null, null], ['kind', null], ['kind', 'group']] as const) {
          const selection = applyFilter(rows, f);
          const got = curves(selection, rows, { endpoint, method: 'km', factor, stratum, minObs: 365 });
          const byLevel = new Map<string, Interval[]>();
          const logRankInput: Record<string, { time: number; event: boolean; stratum?: string }[]> = {};
          for (const [level, cases] of levelsOf(selection, factor)) {
            const starts = endpoint === 'tooth' ? toothLossStarts(cases) : cases;
            const intervals = endpoint === 'tooth' ? toothLossObservations(cases, rows, 365) : cases.map((c) => healingObservation(c, 365));
            byLevel.set(level, intervals);
            logRankInput[level] = intervals.map((i, j) => ({ ...(i.right === null ? { time: i.left, event: false } : { time: i.right, event: true }), ...(stratum ? { stratum: FACTORS[stratum].level(starts[j]!) } : {}) }));
          }
          const context = JSON.stringify({ f, endpoint, factor, stratum });
          expect(got.curves.map((c) => c.level).sort(), context).toEqual([...byLevel.keys()].sort());
          for (const c of got.curves) {
            const intervals = byLevel.get(c.level)!;
            expect(c.n, context).toBe(intervals.length);
            expect(c.events, context).toBe(intervals.filter((i) => i.right !== null).length);
            expect(c.censored, context).toEqual([...new Set(intervals.filter((i) => i.right === null).map((i) => i.left))].sort((a, b) => a - b));
            expect(c.atRisk, context).toEqual(AT_RISK_MONTHS.map((m) => intervals.filter((i) => (i.right ?? i.left) >= milestoneDays(m)).length));
            expect(c.points.slice(1), context).toEqual(kmOf(intervals).map((s) => ({ time: s.time, survival: s.survival, lower: s.lower, upper: s.upper })));
          }
          const withCases = Object.fromEntries(Object.entries(logRankInput).filter(([, xs]) => xs.length > 0));
          if (Object.keys(withCases).length >= 2) expect(got.logRank?.chiSquare, context).toBe(logRank(withCases).chiSquare);
          const ci = cumulativeIncidence(selection.map(competingEvent));
          expect(got.competing.map((x) => x.cause), context).toEqual(Object.keys(ci));
          for (const x of got.competing) expect(x.points, context).toEqual(ci[x.cause]!.map((s) => ({ time: s.time, incidence: s.incidence, lower: s.lower, upper: s.upper })));
        }
  });

  it('the same curves for a selection by applyFilter, another array of the same cases and copies of the cases', () => {
    const selection = applyFilter(rows, { kind: 'primary_treatment' });
    for (const endpoint of ['healing', 'tooth'] as const) {
      const expected = curves(selection, rows, { endpoint, method: 'km', factor: 'kind', stratum: 'group', minObs: 365 });
      expect(curves([...selection], rows, { endpoint, method: 'km', factor: 'kind', stratum: 'group', minObs: 365 })).toEqual(expected);
      expect(curves(selection.map((c) => ({ ...c })), rows, { endpoint, method: 'km', factor: 'kind', stratum: 'group', minObs: 365 })).toEqual(expected);
    }
  });
});
