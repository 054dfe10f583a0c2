import Papa from 'papaparse';
import { describe, expect, it } from 'vitest';
import { planVisits } from '@/lib/recall/plan';
import { DEFAULT_RECALL_POLICY } from '@/lib/schemas/recall-policy';
import { parseReviewRows, readReviewCsv, REVIEW_COLUMN_KEYS, REVIEW_TEMPLATE, reviewTemplateCsv, type CanonicalRecord } from '@/lib/registry/review-csv';
import { attachReviews, type ImportCaseInfo } from '@/lib/registry/review-import';
import { assessRecordedReview } from '@/lib/scoring';

/**
 * Issue 16, the review import's row rules: the template parser (values, schema, columns) and the
 * attach rules (case, dates, duplicates, event dates, visits). Outcomes are checked against
 * lib/scoring's own `assessRecordedReview` (Friedman & Mor 2004 as Lamina implements it); the
 * visit windows are the default recall policy's (lib/schemas/recall-policy.ts).
 */

const base: Record<string, string> = Object.fromEntries(REVIEW_COLUMN_KEYS.map((k) => [k, '']));
const rec = (line: number, cells: Record<string, string> = {}): CanonicalRecord => ({
  line,
  cells: { ...base, registry_number: 'R-1', tooth_fdi: '36', review_date: '2025-06-01', tooth_status: 'present', pai: '1', lesion_mm: '0', assessor_email: 'cal@x.test', ...cells },
});

describe('the review template', () => {
  it('has every column of the descriptor, no outcome column, and an example row that parses clean', () => {
    const [header, example] = Papa.parse<string[]>(reviewTemplateCsv().trim()).data;
    expect(header).toEqual(REVIEW_TEMPLATE.columns.map((c) => c.key));
    expect(header!.some((h) => /outcome|success|healed/.test(h))).toBe(false);
    const read = readReviewCsv(reviewTemplateCsv());
    expect(read.errors).toEqual([]);
    const parsed = parseReviewRows(read.records);
    expect(parsed.errors).toEqual([]);
    expect(parsed.rows[0]).toMatchObject({ line: 2, registryNumber: 'EB-000123', tooth: 36, assessorEmail: 'clinician@lamina-demo.invalid' });
    expect(example).toHaveLength(header!.length);
  });

  it('refuses unknown and missing columns on line 1', () => {
    const r = readReviewCsv('registry_number,tooth_fdi,review_date,outcome\nR-1,36,2025-01-01,healed\n');
    expect(r.errors).toEqual(
      expect.arrayContaining([
        expect.objectContaining({ line: 1, column: 'outcome' }),
        expect.objectContaining({ line: 1, column: 'tooth_status' }),
        expect.objectContaining({ line: 1, column: 'assessor_email' }),
      ]),
    );
    expect(readReviewCsv('case_ref,review_date,tooth_status,assessor_email\n').errors).toEqual([]);
    expect(readReviewCsv('review_date,tooth_status,assessor_email\n').errors[0]).toMatchObject({ column: 'registry_number' });
  });
});

describe('parseReviewRows', () => {
  it('reads codes by code, label or synonym, yes/no signs, decimal commas; blank signs are not recorded', () => {
    const { rows, errors } = parseReviewRows([
      rec(2, { tooth_status: 'Present', pai: '3', lesion_mm: '2,5', tender_to_percussion: 'Y', swelling: 'no' }),
      rec(3, { tooth_status: 'apicectomy', pai: '2', lesion_mm: '1', event_date: '2025-05-01' }),
      rec(4, { tooth_status: 'XLA', pai: '', lesion_mm: '', extraction_reason: 'VRF', tender_to_percussion: 'yes' }),
    ]);
    expect(errors).toEqual([]);
    expect(rows[0]!.review).toMatchObject({ toothStatus: 'present', paiScore: 3, lesionDiameterMm: 2.5, tenderToPercussion: true, swelling: false });
    expect(rows[0]!.review).not.toHaveProperty('sinusTract');
    expect(rows[1]!.review).toMatchObject({ toothStatus: 'surgery', eventDate: '2025-05-01' });
    // an extracted tooth has nothing to score: its signs are dropped (lib/schemas/review.ts)
    expect(rows[2]!.review).toMatchObject({ toothStatus: 'extracted', extractionReason: 'fracture' });
    expect(rows[2]!.review).not.toHaveProperty('tenderToPercussion');
  });

  it('reports each bad cell by line and column', () => {
    const { rows, errors } = parseReviewRows([
      rec(2, { review_date: '01/06/2025' }),
      rec(3, { pai: '7' }),
      rec(4, { pai: '', lesion_mm: '' }),
      rec(5, { tooth_status: 'wobbly' }),
      rec(6, { swelling: 'maybe' }),
      rec(7, { assessor_email: 'not-an-email' }),
      rec(8, { registry_number: '', tooth_fdi: '' }),
      rec(9, { tooth_fdi: '19' }),
      rec(10, { event_date: '2025-05-01' }),
      rec(11, { tooth_status: 'retreated', event_date: '2025-07-01' }),
      rec(12, { extraction_reason: 'fracture' }),
      rec(13, { lesion_mm: '3 mm' }),
      rec(14, { case_ref: 'zz!' }),
    ]);
    expect(rows).toEqual([]);
    const at = (line: number) => errors.filter((e) => e.line === line).map((e) => e.column);
    expect(at(2)).toEqual(['review_date']);
    expect(errors.find((e) => e.line === 2)!.reason).toMatch(/YYYY-MM-DD/);
    expect(at(3)).toContain('pai');
    expect(at(4)).toEqual(expect.arrayContaining(['pai', 'lesion_mm']));
    expect(at(5)).toEqual(['tooth_status']);
    expect(at(6)).toEqual(['swelling']);
    expect(at(7)).toEqual(['assessor_email']);
    expect(at(8)).toEqual(['registry_number', 'tooth_fdi']);
    expect(at(9)).toEqual(['tooth_fdi']);
    expect(at(10)).toEqual(['event_date']); // an event date goes with an event only
    expect(at(11)).toEqual(['event_date']); // after the review that records it
    expect(at(12)).toEqual(['extraction_reason']);
    expect(errors.find((e) => e.line === 13)!.reason).toMatch(/without the unit/);
    expect(at(14)).toEqual(['case_ref']);
  });

  it('skips blank rows', () => {
    expect(parseReviewRows([{ line: 2, cells: { ...base } }])).toEqual({ rows: [], errors: [] });
  });
});

// --- attach ---------------------------------------------------------------------------------------

const TODAY = '2026-12-02';
function caseOf(id: string, over: Partial<ImportCaseInfo> = {}, statusOf: (windowEnd: string) => ImportCaseInfo['visits'][number]['status'] = (we) => (we < TODAY ? 'missed' : 'planned')): ImportCaseInfo {
  const completionDate = over.completionDate ?? '2024-06-01';
  const visits = planVisits(completionDate!, DEFAULT_RECALL_POLICY).map((v) => ({
    id: `${id}-v${v.milestone}`,
    ...v,
    status: statusOf(v.windowEnd),
    bookedDate: null,
    missedReason: statusOf(v.windowEnd) === 'missed' ? ('window_ended' as const) : null,
    missedOn: null,
    missedFrom: null,
  }));
  return { id, registryNumber: 'R-1', tooth: 36, completionDate, baselinePai: 4, archived: false, reviews: [], visits, ...over };
}
const assessors = new Map([['cal@x.test', 'user-cal']]);
const opts = { today: TODAY, minObservationDays: 365, assessors };
const rows = (...rs: CanonicalRecord[]) => {
  const p = parseReviewRows(rs);
  expect(p.errors).toEqual([]);
  return p.rows;
};

describe('attachReviews', () => {
  it('finds the case on the tooth in follow-up on the review date: the primary treatment, then its retreatment', () => {
    const primary = caseOf('aaaaaaaa-0000-4000-8000-000000000001', { completionDate: '2021-03-01' });
    const retreat = caseOf('bbbbbbbb-0000-4000-8000-000000000002', { completionDate: '2024-06-01' });
    const r = attachReviews(rows(rec(2, { review_date: '2022-03-05' }), rec(3, { review_date: '2025-06-10' })), [primary, retreat], opts);
    expect(r.errors).toEqual([]);
    expect(r.accepted.map((a) => a.caseId)).toEqual([primary.id, retreat.id]);
  });

  it('unknown or ambiguous cases, future dates, reviews before completion, unknown assessors: problems by column', () => {
    const a = caseOf('aaaaaaaa-0000-4000-8000-000000000001');
    const b = caseOf('aaaaaaaa-0000-4000-8000-000000000003', { registryNumber: 'R-2' });
    const twin = caseOf('cccccccc-0000-4000-8000-000000000004', { registryNumber: 'R-2' });
    const r = attachReviews(
      rows(
        rec(2, { registry_number: 'R-9' }),
        rec(3, { tooth_fdi: '11' }),
        rec(4, { review_date: '2027-01-01' }),
        rec(5, { review_date: '2024-01-01' }),
        rec(6, { assessor_email: 'stranger@x.test' }),
        rec(7, { registry_number: 'R-2' }), // two cases completed the same day on that tooth
        rec(8, { registry_number: '', tooth_fdi: '', case_ref: 'aaaaaaaa' }), // a prefix of two ids
        rec(9, { registry_number: '', tooth_fdi: '', case_ref: 'dddddddd' }),
        rec(10, { case_ref: 'cccccccc' }), // the reference names R-2's case, the row says R-1
      ),
      [a, b, twin],
      opts,
    );
    expect(r.accepted).toEqual([]);
    expect(r.errors.map((e) => [e.line, e.column])).toEqual([
      [2, 'registry_number'],
      [3, 'tooth_fdi'],
      [4, 'review_date'],
      [5, 'review_date'],
      [6, 'assessor_email'],
      [7, 'case_ref'],
      [8, 'case_ref'],
      [9, 'case_ref'],
      [10, 'registry_number'],
    ]);
  });

  it('a review already recorded (same case and date) is a duplicate, skipped; twice in the file is a problem', () => {
    const a = caseOf('aaaaaaaa-0000-4000-8000-000000000001', { reviews: [{ reviewDate: '2025-06-01', eventDate: null }] });
    const r = attachReviews(rows(rec(2, {}), rec(3, { review_date: '2025-12-01' }), rec(4, { review_date: '2025-12-01' })), [a], opts);
    expect(r.duplicates).toEqual([{ line: 2, caseId: a.id, reviewDate: '2025-06-01' }]);
    expect(r.accepted.map((x) => x.line)).toEqual([3]);
    expect(r.errors).toEqual([expect.objectContaining({ line: 4, column: 'review_date' })]);
  });

  it('an event date before an earlier review of the case, or before completion, is refused', () => {
    const a = caseOf('aaaaaaaa-0000-4000-8000-000000000001', { reviews: [{ reviewDate: '2025-06-01', eventDate: null }] });
    const r = attachReviews(
      rows(
        rec(2, { review_date: '2026-06-01', tooth_status: 'extracted', pai: '', lesion_mm: '', event_date: '2025-01-01', extraction_reason: 'fracture' }),
        rec(3, { review_date: '2026-07-01', tooth_status: 'extracted', pai: '', lesion_mm: '', event_date: '2024-01-01', extraction_reason: 'fracture', registry_number: 'R-1', tooth_fdi: '36' }),
      ),
      [a],
      opts,
    );
    expect(r.errors.map((e) => [e.line, e.column])).toEqual([
      [2, 'event_date'],
      [3, 'event_date'],
    ]);
  });

  it('outcomes are computed by the scoring rules, never read from the file', () => {
    const a = caseOf('aaaaaaaa-0000-4000-8000-000000000001');
    const r = attachReviews(rows(rec(2, { review_date: '2025-06-10', pai: '3', lesion_mm: '2', tender_to_percussion: 'yes' }), rec(3, { review_date: '2026-06-05', pai: '1', lesion_mm: '0' })), [a], opts);
    for (const x of r.accepted) {
      const expected = assessRecordedReview({ completionDate: a.completionDate!, baselinePai: 4 }, { reviewDate: x.review.reviewDate, toothStatus: 'present', paiScore: x.review.paiScore, signs: x.signs }, 365);
      expect(x.assessment).toEqual(expected);
    }
    // tenderness to percussion is a sign of disease (Friedman & Mor 2004); PAI 1 after two years: healed (Ørstavik 1986 scale)
    expect(r.accepted.map((x) => x.assessment.outcome)).toEqual(['disease', 'healed']);
  });

  it('visits: a review in a window marks it attended (missed ones too), the others past are missed, the plan continues; none of the open visits already due is reminded unless asked', () => {
    // completed 2025-10-01, all visits still planned: on 2026-12-02 the 6-month window has ended, the
    // 12-month visit was due on 2026-10-01 and its window (−60/+120 days, default policy) still runs
    const a = caseOf('aaaaaaaa-0000-4000-8000-000000000001', { completionDate: '2025-10-01' }, () => 'planned');
    const v = Object.fromEntries(a.visits.map((x) => [x.milestone, x]));
    const r = attachReviews(rows(rec(2, { review_date: '2026-04-10' })), [a], opts);
    const to = Object.fromEntries(r.visitChanges.map((c) => [c.visitId, c.changes.status]));
    expect(r.accepted[0]!.visitId).toBe(v[6]!.id);
    expect(to[v[6]!.id]).toBe('attended');
    for (const x of a.visits) {
      if (x.milestone === 6) continue;
      if (x.windowEnd < TODAY) expect(to[x.id], `${x.milestone} months`).toBe('missed');
      else expect(to[x.id]).toBeUndefined();
    }
    const quiet = a.visits.filter((x) => x.windowEnd >= TODAY && x.dueDate < TODAY).map((x) => x.id);
    expect(quiet).toEqual([v[12]!.id]);
    expect(r.quietVisits).toEqual(quiet);
    expect(attachReviews(rows(rec(2, { review_date: '2026-04-10' })), [a], { ...opts, remindOverdue: true }).quietVisits).toEqual([]);
    // a missed visit (as the case import leaves it) becomes attended by a review in its window
    const b = caseOf('aaaaaaaa-0000-4000-8000-000000000001');
    const rb = attachReviews(rows(rec(2, { review_date: '2024-12-01' })), [b], opts);
    expect(rb.visitChanges.find((c) => c.visitId === `${b.id}-v6`)).toMatchObject({ from: 'missed', changes: { status: 'attended', missedReason: null } });
  });

  it('an extraction cancels the visits after it; a review outside every window is unplanned', () => {
    const a = caseOf('aaaaaaaa-0000-4000-8000-000000000001', { completionDate: '2025-06-01' });
    const r = attachReviews(rows(rec(2, { review_date: '2025-07-20', tooth_status: 'extracted', pai: '', lesion_mm: '', extraction_reason: 'endodontic' })), [a], opts);
    expect(r.accepted[0]!.visitId).toBeNull();
    const cancelled = r.visitChanges.filter((c) => c.changes.status === 'cancelled').map((c) => c.visitId);
    expect(cancelled).toEqual(a.visits.filter((x) => x.windowStart > '2025-07-20').map((x) => x.id));
    expect(r.quietVisits).toEqual([]);
  });
});
