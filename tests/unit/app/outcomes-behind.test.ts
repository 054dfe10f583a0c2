import { describe, expect, it } from 'vitest';
import { createElement } from 'react';
import { renderToStaticMarkup } from 'react-dom/server';
import { OutcomesHeader } from '@/app/(app)/outcomes/_components/parts';

/** The outcomes views say when their figures lag entries being saved (lib/services/outcomes-cache.ts, bounded lag). */
describe('outcomes header: figures behind the latest entries', () => {
  const header = (asOf?: { at: string; behind: boolean; maxLagMs: number }) =>
    renderToStaticMarkup(createElement(OutcomesHeader, { current: '/outcomes', filters: {}, clinicians: [], own: false, problems: {}, csvView: 'overview', asOf }));

  it('a note, as a status, when entries were saved since the rows were read', () => {
    const html = header({ at: '2026-12-03T08:00:00.000Z', behind: true, maxLagMs: 60_000 });
    expect(html).toContain('Entries are being saved as you read: these figures may leave out those of the last 60 seconds, and catch up on their own.');
    expect(html).toMatch(/role="status"[^>]*>(?:(?!<\/div>).)*Entries are being saved/);
  });

  it('no note when the figures are current, or when the report carries no time', () => {
    expect(header({ at: '2026-12-03T08:00:00.000Z', behind: false, maxLagMs: 60_000 })).not.toContain('Entries are being saved');
    expect(header()).not.toContain('Entries are being saved');
  });
});
