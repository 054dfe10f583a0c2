import { describe, expect, it } from 'vitest';
import { methodsParagraphs } from '@/lib/outcomes/methods';
import { byFactor, milestoneDays, overview, windowDays } from '@/lib/outcomes';
import { funnel, FUNNEL_CAUTION } from '@/lib/outcomes/funnel';
import { pdfText, renderOutcomesReport } from '@/lib/pdf/outcomes-report';

// The printed report's methods paragraph names the definitions of lib/outcomes/cases.ts and the
// rules of compute.ts / funnel.ts (so a change there shows here); the PDF's font covers Latin only.
describe('the report’s methods paragraph', () => {
  it('names the milestone, the windows, the minimum observation time and the model’s limits as the code has them', () => {
    const text = methodsParagraphs(400).join(' ');
    expect(text).toContain(`12 months = ${milestoneDays(12)} days`);
    expect(text).toContain(`± ${windowDays(12)} days at 12 months`);
    expect(text).toContain(`± ${windowDays(24)} days later on`);
    expect(text).toContain('minimum observation time of 400 days');
    expect(text).toContain('fewer than 20 cases are marked "few cases"');
    expect(text).toContain('below 60%');
    expect(text).toContain('Spiegelhalter 2005');
    expect(text).toContain('not a verdict');
  });

  it('defines lost to follow-up as lostAt does (outcome not known when due), not as a visit closed as lost', () => {
    const text = methodsParagraphs(365).join(' ');
    expect(text).toContain('Lost to follow-up: a case due for the milestone whose outcome then is not known');
    expect(text).not.toMatch(/Lost to follow-up: a recall visit/);
  });
});

describe('pdfText', () => {
  it('spells out the symbols the font lacks and keeps Latin, dashes and quotes', () => {
    expect(pdfText('latest review ≥ 12 months; χ² = 3.1')).toBe('latest review >= 12 months; chi-square = 3.1');
    expect(pdfText('Zoë’s “case” – 5 × 2 ± 1 ◆')).toBe('Zoë’s “case” – 5 × 2 ± 1 ');
    expect(pdfText('Ωmega')).toBe('?mega');
  });
});

describe('the report with nothing to show', () => {
  it('a practice without completed cases still gets a PDF (no funnel, no table rows), not an error', async () => {
    const f = funnel([], 'm12', 365);
    const pdf = await renderOutcomesReport({
      practiceName: 'Empty practice',
      generated: '2 Dec 2026, 10:30',
      preparedBy: 'lead',
      filters: [{ label: 'Completed', value: 'any date' }],
      own: false,
      overview: overview([], [], '2026-12-02', 365),
      practice: null,
      factorLabel: 'Treatment kind',
      factorTable: byFactor([], 'kind', 365),
      funnel: { filter: {}, own: false, asOf: { at: '2026-12-02T10:30:00.000Z', behind: false, maxLagMs: 0 }, clinicians: [], measure: 'm12', measureLabel: 'strict success at 12 months', adjust: 'adjusted', adjustShown: 'crude', practice: f.practice, cases: 0, model: null, modelNote: f.modelNote, points: [], curve: [], literature: [], caution: FUNNEL_CAUTION },
      methods: methodsParagraphs(365),
    });
    expect(pdf.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    expect(pdf.toString('latin1')).toMatch(/\/Type\s*\/Page\b/);
  }, 60_000);
});
