import { describe, expect, it } from 'vitest';
import { methodsParagraphs } from '@/lib/outcomes/methods';
import { milestoneDays, windowDays } from '@/lib/outcomes';
import { pdfText } from '@/lib/pdf/outcomes-report';

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
});

describe('pdfText', () => {
  it('spells out the symbols the font lacks and keeps Latin, dashes and quotes', () => {
    expect(pdfText('latest review ≥ 12 months; χ² = 3.1')).toBe('latest review >= 12 months; chi-square = 3.1');
    expect(pdfText('Zoë’s “case” – 5 × 2 ± 1 ◆')).toBe('Zoë’s “case” – 5 × 2 ± 1 ');
    expect(pdfText('Ωmega')).toBe('?mega');
  });
});
