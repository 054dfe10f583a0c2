import { describe, expect, it } from 'vitest';
import { createElement } from 'react';
import { renderToStaticMarkup } from 'react-dom/server';
import { overview } from '@/lib/outcomes';
import { OverviewFigures } from '@/app/(app)/outcomes/_components/OverviewFigures';

/** A period with no cases: tooth survival shows no figure rather than 100% of no teeth (found walking the empty filter). */
describe('overview figures with no cases', () => {
  const html = renderToStaticMarkup(createElement(OverviewFigures, { o: overview([], [], '2026-12-03', 365), idPrefix: 'ov', title: 'The cases chosen' }));

  it('says there are no teeth instead of a survival figure, and no Turnbull note', () => {
    expect(html).toContain('(no teeth)');
    expect(html).not.toMatch(/100\.0%/);
    expect(html).not.toContain('not computed');
    expect(html).toContain('0 teeth, 0 extracted');
  });
});
