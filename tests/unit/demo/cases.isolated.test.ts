import { afterEach, describe, expect, it, vi } from 'vitest';
import { DEMO_RECALL_POLICY, generateDemoWorld, type DemoCase } from '@/lib/demo/cases';
import { DEMO_USERS } from '@/lib/demo/people';
import { createRandom, roundTo } from '@/lib/demo/random';
import { canTransition, isOpenStatus, planVisits, VISIT_STATUSES } from '@/lib/recall';
import { addMonthsClamped, compareDates } from '@/lib/registry/calendar-date';
import { CaseImportSchema } from '@/lib/schemas/case';
import { PatientCreateSchema } from '@/lib/schemas/patient';
import { ReviewCreateSchema } from '@/lib/schemas/review';
import { toothInfo } from '@/lib/teeth';

const TODAY = '2026-12-01';
const world = generateDemoWorld({ today: TODAY });

afterEach(() => vi.restoreAllMocks());

describe('seeded random', () => {
  it('repeats for a seed and differs between seeds', () => {
    const a = createRandom(1);
    const b = createRandom(1);
    const c = createRandom(2);
    const xs = Array.from({ length: 5 }, () => a.next());
    expect(Array.from({ length: 5 }, () => b.next())).toEqual(xs);
    expect(Array.from({ length: 5 }, () => c.next())).not.toEqual(xs);
    expect(xs.every((x) => x >= 0 && x < 1)).toBe(true);
  });

  it('int stays within its bounds and reaches both', () => {
    const r = createRandom(3);
    const seen = new Set(Array.from({ length: 500 }, () => r.int(1, 4)));
    expect([...seen].sort()).toEqual([1, 2, 3, 4]);
  });

  it('rounds without float noise', () => {
    expect(roundTo(1.26, 0.5)).toBe(1.5);
    expect(roundTo(0.30000000000000004, 0.1)).toBe(0.3);
  });
});

describe('determinism', () => {
  it('the same seed and today give the same world', () => {
    expect(generateDemoWorld({ today: TODAY })).toEqual(world);
  });

  it('another seed gives another world', () => {
    const other = generateDemoWorld({ today: TODAY, seed: 99 });
    expect(other.cases.map((c) => c.data.tooth)).not.toEqual(world.cases.map((c) => c.data.tooth));
  });

  it('never calls Math.random or the clock', () => {
    vi.spyOn(Math, 'random').mockImplementation(() => {
      throw new Error('Math.random used');
    });
    vi.spyOn(Date, 'now').mockImplementation(() => {
      throw new Error('Date.now used');
    });
    try {
      expect(() => generateDemoWorld({ today: '2025-03-01', seed: 5 })).not.toThrow();
    } finally {
      vi.restoreAllMocks();
    }
  });
});

describe('the invented practice', () => {
  it('has four clinicians, a coordinator, a practice lead and a researcher', () => {
    const has = (role: string) => world.staff.filter((s) => s.roles.includes(role as never)).length;
    expect(world.clinicians).toHaveLength(4);
    expect(has('clinician')).toBe(4);
    expect(has('coordinator')).toBeGreaterThanOrEqual(1);
    expect(has('auditor')).toBeGreaterThanOrEqual(1); // the practice lead's role
    expect(has('researcher')).toBeGreaterThanOrEqual(1);
    for (const u of DEMO_USERS) expect(world.staff.map((s) => s.email)).toContain(u.email);
  });

  it('uses only reserved, undeliverable e-mail domains, each address once', () => {
    const emails = [...world.staff.map((s) => s.email), ...world.referrers.map((r) => r.email), ...world.patients.flatMap((p) => (p.email ? [p.email] : []))];
    for (const e of emails) expect(e).toMatch(/@([a-z]+\.)?lamina-demo\.invalid$/);
    expect(new Set(emails).size).toBe(emails.length);
  });

  it('uses fiction phone numbers and the unused ZZ postal area', () => {
    for (const p of world.patients) {
      expect(p.phone).toMatch(/^07700 900\d{3}$/);
      expect(p.postalCode).toMatch(/^ZZ\d /);
    }
  });

  it('asks for the 4-year review too', () => {
    expect(world.practice.recallPolicy.milestones.map((m) => m.months)).toEqual([6, 12, 24, 48]);
  });
});

describe('sizes and validity', () => {
  it('has ~630 patients and 760 completed cases over the five years before today, at least 600 in the last four', () => {
    // Since issue 11 (was 250 patients, 640 cases over four years): about 1.2 treated teeth per
    // patient, as cohorts report, and a fifth year so that teeth reach their four-year review.
    expect(world.patients).toHaveLength(630);
    expect(world.cases.filter((c) => c.previousCaseKey === null)).toHaveLength(760);
    expect(world.cases.filter((c) => compareDates(c.data.completionDate, addMonthsClamped(TODAY, -48)) >= 0).length).toBeGreaterThanOrEqual(600);
    const from = addMonthsClamped(TODAY, -60);
    for (const c of world.cases) {
      expect(compareDates(c.data.completionDate, from)).toBeGreaterThanOrEqual(0);
      expect(compareDates(c.data.completionDate, TODAY)).toBeLessThan(0);
    }
    expect(new Set(world.cases.map((c) => c.patientKey)).size).toBe(630);
  });

  it('every patient passes the patient schema', () => {
    for (const { key: _k, ...p } of world.patients) {
      const r = PatientCreateSchema.safeParse(p);
      expect(r.success ? '' : JSON.stringify(r.error.issues)).toBe('');
    }
  });

  it('every case passes the case schema unchanged', () => {
    for (const c of world.cases) {
      const r = CaseImportSchema.safeParse(c.data);
      expect(r.success ? '' : `${c.key}: ${JSON.stringify(r.error.issues)}`).toBe('');
      expect(r.data).toEqual(c.data);
    }
  });

  it('every review passes the review schema', () => {
    for (const c of world.cases) {
      const reviews = [...c.visits.flatMap((v) => (v.review ? [v.review] : [])), ...c.unplannedReviews];
      for (const { assessorEmail, ...review } of reviews) {
        expect(world.clinicians).toContain(assessorEmail);
        const r = ReviewCreateSchema.safeParse({ ...review, caseId: c.key, assessorId: assessorEmail });
        expect(r.success ? '' : `${c.key}: ${JSON.stringify(r.error.issues)}`).toBe('');
      }
    }
  });

  it('links patients, clinicians and referrers that exist; a tooth is treated again only in a case linked to its earlier one', () => {
    const patients = new Map(world.patients.map((p) => [p.key, p]));
    const referrers = new Set(world.referrers.map((r) => r.key));
    const byKey = new Map(world.cases.map((c) => [c.key, c]));
    const teeth = new Set<string>();
    let linked = 0;
    for (const c of world.cases) {
      const p = patients.get(c.patientKey)!;
      expect(p).toBeDefined();
      expect(world.clinicians).toContain(c.operatorEmail);
      if (c.referrerKey) expect(referrers.has(c.referrerKey)).toBe(true);
      expect(compareDates(p.dateOfBirth, c.data.startDate)).toBeLessThan(0);
      expect(compareDates(p.consentDate, c.data.startDate)).toBeLessThanOrEqual(0);
      const key = `${c.patientKey}:${c.data.tooth}`;
      if (c.previousCaseKey) {
        // since issue 11: a retreatment or surgery done here follows the tooth's earlier case
        const previous = byKey.get(c.previousCaseKey)!;
        expect([previous.patientKey, previous.data.tooth]).toEqual([c.patientKey, c.data.tooth]);
        expect(compareDates(previous.data.completionDate, c.data.startDate)).toBeLessThanOrEqual(0);
        expect(['nonsurgical_retreatment', 'apical_surgery']).toContain(c.data.kind);
        expect(teeth.has(key)).toBe(true);
        linked++;
        continue;
      }
      expect(teeth.has(key)).toBe(false);
      teeth.add(key);
    }
    expect(linked).toBeGreaterThan(0);
  });
});

describe('realistic mix (common practice, approximate)', () => {
  const share = (pred: (c: DemoCase) => boolean) => world.cases.filter(pred).length / world.cases.length;
  const group = (g: string) => share((c) => toothInfo(c.data.tooth).group === g);

  it('molars most, then premolars, then anterior teeth', () => {
    const molar = group('molar');
    const premolar = group('premolar');
    const anterior = group('incisor') + group('canine');
    expect(molar).toBeGreaterThan(premolar);
    expect(premolar).toBeGreaterThan(anterior);
    expect(molar).toBeGreaterThan(0.45);
  });

  it('mostly primary treatment, about a quarter retreatment, a few apical surgeries', () => {
    const kind = (k: string) => share((c) => c.data.kind === k);
    expect(kind('primary_treatment')).toBeGreaterThan(0.55);
    expect(kind('nonsurgical_retreatment')).toBeGreaterThan(0.18);
    expect(kind('nonsurgical_retreatment')).toBeLessThan(0.32);
    expect(kind('apical_surgery')).toBeGreaterThan(0.02);
    expect(kind('apical_surgery')).toBeLessThan(0.1);
  });

  it('fills mostly within 0–2 mm, some more than 2 mm short, some beyond', () => {
    const filled = world.cases.filter((c) => c.data.canals?.length);
    const cls = (c: DemoCase) => {
      const d = c.data.canals!.map((x) => x.fillToApexMm!);
      return d.some((x) => x < 0) ? 'beyond' : d.some((x) => x > 2) ? 'short' : 'within';
    };
    const n = (k: string) => filled.filter((c) => cls(c) === k).length / filled.length;
    expect(n('within')).toBeGreaterThan(0.6);
    expect(n('short')).toBeGreaterThan(0.05);
    expect(n('beyond')).toBeGreaterThan(0.05);
  });

  it('has cases with and without lesions, and every PAI score', () => {
    expect(new Set(world.cases.map((c) => c.data.paiScore))).toEqual(new Set([1, 2, 3, 4, 5]));
    expect(share((c) => c.data.lesionDiameterMm === 0)).toBeGreaterThan(0.2);
    expect(share((c) => c.data.lesionDiameterMm > 5)).toBeGreaterThan(0.05);
  });

  it('spreads cases over the four clinicians', () => {
    for (const e of world.clinicians) expect(share((c) => c.operatorEmail === e)).toBeGreaterThan(0.1);
  });
});

describe('follow-up history', () => {
  const visits = world.cases.flatMap((c) => c.visits.map((v) => ({ c, v })));

  it('has visits in every status', () => {
    expect(new Set(visits.map(({ v }) => v.status))).toEqual(new Set(VISIT_STATUSES));
  });

  it('visits are the practice’s recall plan for the completion date', () => {
    for (const c of world.cases) {
      expect(c.visits.map(({ milestone, dueDate, windowStart, windowEnd }) => ({ milestone, dueDate, windowStart, windowEnd }))).toEqual(
        planVisits(c.data.completionDate, DEMO_RECALL_POLICY),
      );
    }
  });

  it('every history is a path through the transition table, in date order, never after today', () => {
    for (const { c, v } of visits) {
      expect(v.history[0]).toEqual({ status: 'planned', on: c.data.completionDate });
      expect(v.history[v.history.length - 1]!.status).toBe(v.status);
      for (let i = 1; i < v.history.length; i++) {
        expect(canTransition(v.history[i - 1]!.status, v.history[i]!.status)).toBe(true);
        expect(compareDates(v.history[i - 1]!.on, v.history[i]!.on)).toBeLessThanOrEqual(0);
      }
      expect(compareDates(v.history[v.history.length - 1]!.on, TODAY)).toBeLessThanOrEqual(0);
    }
  });

  it('no open visit has a window that already ended (those are missed)', () => {
    for (const { v } of visits) if (isOpenStatus(v.status)) expect(compareDates(v.windowEnd, TODAY)).toBeGreaterThanOrEqual(0);
  });

  it('a review belongs to each attended visit, dated inside the window and not after today', () => {
    for (const { v } of visits) {
      expect(Boolean(v.review)).toBe(v.status === 'attended');
      if (v.review) {
        expect(compareDates(v.review.reviewDate, v.windowStart)).toBeGreaterThanOrEqual(0);
        expect(compareDates(v.review.reviewDate, v.windowEnd)).toBeLessThanOrEqual(0);
        expect(compareDates(v.review.reviewDate, TODAY)).toBeLessThanOrEqual(0);
      }
    }
  });

  it('after a tooth is found extracted or re-treated, its later visits are cancelled', () => {
    let checked = 0;
    for (const c of world.cases) {
      const found = c.visits.findIndex((v) => v.review && v.review.toothStatus !== 'present');
      if (found < 0) continue;
      checked++;
      for (const v of c.visits.slice(found + 1)) expect(['cancelled', 'closed']).toContain(v.status);
    }
    expect(checked).toBeGreaterThan(0);
  });

  it('patients without recall consent are never invited', () => {
    const noContact = new Set(world.patients.filter((p) => !p.recallContact).map((p) => p.key));
    expect(noContact.size).toBeGreaterThan(0);
    for (const { c, v } of visits) if (noContact.has(c.patientKey)) expect(v.history.some((h) => h.status === 'invited')).toBe(false);
  });
});
