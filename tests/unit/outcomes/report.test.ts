import { readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { methodsParagraphs } from '@/lib/outcomes/methods';
import { byFactor, milestoneDays, overview, windowDays } from '@/lib/outcomes';
import { funnel, FUNNEL_CAUTION } from '@/lib/outcomes/funnel';
import { pdfText, renderOutcomesReport } from '@/lib/pdf/outcomes-report';
import { woffToSfnt } from '@/lib/pdf/woff';

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

/** The report's data for a practice without completed cases (every section empty). */
function emptyReport(practiceName: string) {
  const f = funnel([], 'm12', 365);
  return {
    practiceName,
    generated: '2 Dec 2026, 10:30',
    preparedBy: 'lead',
    filters: [{ label: 'Completed', value: 'any date' }],
    own: false,
    overview: overview([], [], '2026-12-02', 365),
    practice: null,
    factorLabel: 'Treatment kind',
    factorTable: byFactor([], 'kind', 365),
    funnel: { filter: {}, own: false, clinicians: [], measure: 'm12' as const, measureLabel: 'strict success at 12 months', adjust: 'adjusted' as const, adjustShown: 'crude' as const, practice: f.practice, cases: 0, model: null, modelNote: f.modelNote, points: [], curve: [], literature: [], caution: FUNNEL_CAUTION },
    methods: methodsParagraphs(365),
  };
}

describe('the report with nothing to show', () => {
  it('a practice without completed cases still gets a PDF (no funnel, no table rows), not an error', async () => {
    const pdf = await renderOutcomesReport(emptyReport('Empty practice'));
    expect(pdf.subarray(0, 5).toString('latin1')).toBe('%PDF-');
    expect(pdf.toString('latin1')).toMatch(/\/Type\s*\/Page\b/);
  }, 60_000);
});

describe('the shaping kept per font (lib/pdf/outcomes-report.tsx cachedShaping)', () => {
  const data = emptyReport;
  // the creation date and the document id are the only bytes that may differ between two drawings
  const undated = (pdf: Buffer) => pdf.toString('latin1').replace(/\(D:\d+Z\)/g, '(D:)').replace(/\/ID \[<[0-9a-f]+> <[0-9a-f]+>\]/g, '/ID');

  it('draws the same PDF whatever was drawn before (the kept shapes are the ones fontkit gives)', async () => {
    const first = await renderOutcomesReport(data('Practice A'));
    await renderOutcomesReport(data('Practice B, drawn between'));
    const again = await renderOutcomesReport(data('Practice A'));
    expect(undated(again)).toBe(undated(first));
    const { Font } = await import('@react-pdf/renderer');
    const font = Font.getFont({ fontFamily: 'Inter', fontWeight: 400 }).data as unknown as { __laminaShaped?: true; layout: (s: string) => { glyphs: { id: number }[]; positions: { xAdvance: number }[] } };
    expect(font.__laminaShaped).toBe(true);
    const fontkit = (await import('fontkit' as string)) as { create: (b: Buffer) => { layout: (s: string) => { glyphs: { id: number }[]; positions: { xAdvance: number }[] } } };
    const plain = fontkit.create(woffToSfnt(readFileSync(path.join(process.cwd(), 'app', 'fonts', 'pdf', 'inter-latin-400-normal.woff'))));
    for (const text of ['Strict success (healed), 12 months', 'office fi 1,024 AVA']) {
      const kept = font.layout(text);
      expect(font.layout(text)).toBe(kept); // the second time from the cache
      expect(kept.glyphs.map((g) => g.id)).toEqual(plain.layout(text).glyphs.map((g) => g.id));
      expect(kept.positions.map((p) => p.xAdvance)).toEqual(plain.layout(text).positions.map((p) => p.xAdvance));
    }
  }, 60_000);
});
