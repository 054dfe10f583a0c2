import { test, expect, type Page } from '@playwright/test';
import { readFile } from 'node:fs/promises';
import { signInAs } from './support';

/**
 * Issue 12, items 2 and 8, as the practice lead: a new factor (sealer) with survival curves per
 * level and their numbers at risk; "Only this level" adds a level filter to the URL, shown as a
 * chip that stays on every tab and goes into the CSV link; the chart downloads as PNG and SVG.
 * Screenshots at 1366 and 375 px are kept as test artefacts.
 */
interface FactorApi {
  table: { levels: { code: string; level: string; cases: number }[] };
  curves: { curves: { level: string; n: number; atRisk: number[] }[] };
}

async function shots(page: Page, name: string, testInfo: { outputPath: (name: string) => string }) {
  for (const width of [1366, 375]) {
    await page.setViewportSize({ width, height: 900 });
    await page.screenshot({ path: testInfo.outputPath(`${name}-${width}.png`), fullPage: true });
  }
  await page.setViewportSize({ width: 1366, height: 900 });
}

test('the lead picks a new factor, sees curves per level, filters by a level on every tab and downloads the chart', async ({ page }, testInfo) => {
  test.setTimeout(120_000);
  await signInAs(page, 'auditor');
  await page.goto('/outcomes/factor');
  await page.getByLabel('How do we do by…').selectOption('sealer');
  await page.getByRole('button', { name: 'Show' }).last().click();
  await expect(page.getByRole('heading', { name: 'Success by sealer' })).toBeVisible();
  expect(page.url()).toContain('factor=sealer');

  // the levels and the numbers at risk per level are the API's
  const api = (await (await page.request.get('/api/outcomes/factor?factor=sealer')).json()) as FactorApi;
  expect(api.table.levels.length).toBeGreaterThan(2);
  await expect(page.getByTestId('factor-level')).toHaveCount(api.table.levels.length);
  await expect(page.getByRole('heading', { name: 'Healing over time by sealer' })).toBeVisible();
  const rows = page.getByTestId('level-at-risk-row');
  await expect(rows).toHaveCount(api.curves.curves.length);
  for (const [i, cv] of api.curves.curves.entries()) {
    await expect(rows.nth(i).locator('td').first()).toContainText(cv.level);
    await expect(rows.nth(i).locator('td').nth(1)).toHaveText(String(cv.atRisk[0]));
    await expect(rows.nth(i).locator('td').nth(3)).toHaveText(String(cv.atRisk[2])); // 12 months
  }
  await expect(page.getByTestId('level-at-risk').getByRole('columnheader', { name: '48 mo', exact: true })).toBeVisible();
  await expect(page.getByTestId('level-chart').locator('svg.recharts-surface').first()).toBeVisible();
  await expect(page.getByTestId('level-log-rank')).toContainText('Log-rank test across the levels');
  await shots(page, 'outcomes-factor-sealer', testInfo);

  // download the chart: a PNG (signature, twice the size) and an SVG that parses, with paths and the title
  const [png] = await Promise.all([page.waitForEvent('download'), page.getByRole('button', { name: 'Download PNG' }).first().click()]);
  expect(png.suggestedFilename()).toBe('lamina-healing-by-sealer.png');
  const pngBytes = await readFile((await png.path())!);
  expect([...pngBytes.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
  const [svgDownload] = await Promise.all([page.waitForEvent('download'), page.getByRole('button', { name: 'Download SVG' }).first().click()]);
  expect(svgDownload.suggestedFilename()).toBe('lamina-healing-by-sealer.svg');
  const svgText = await readFile((await svgDownload.path())!, 'utf8');
  const parsed = await page.evaluate((text) => {
    const doc = new DOMParser().parseFromString(text, 'image/svg+xml');
    const root = doc.documentElement;
    return {
      error: doc.getElementsByTagName('parsererror').length,
      root: root.nodeName,
      width: Number(root.getAttribute('width')),
      paths: doc.getElementsByTagName('path').length,
      title: doc.querySelector('title')?.textContent ?? '',
      background: doc.querySelector('rect')?.getAttribute('fill'),
      legend: [...doc.querySelectorAll('svg > text')].map((t) => t.textContent),
    };
  }, svgText);
  expect(parsed).toMatchObject({ error: 0, root: 'svg', title: 'Free of healing failure by sealer', background: '#ffffff' });
  expect(parsed.paths).toBeGreaterThan(api.curves.curves.length);
  expect(parsed.legend.some((t) => t?.startsWith(api.curves.curves[0]!.level))).toBe(true);
  expect(pngBytes.readUInt32BE(16)).toBe(parsed.width * 2); // IHDR width: drawn at 2×
  await testInfo.attach('chart.svg', { body: svgText, contentType: 'image/svg+xml' });
  await testInfo.attach('chart.png', { body: pngBytes, contentType: 'image/png' });

  // a level filter: only epoxy resin; the chip stays on every tab and goes into the CSV link
  const epoxy = api.table.levels.find((l) => l.code === 'epoxy_resin')!;
  await page.getByRole('link', { name: /^Only this level\s*: Epoxy resin$/ }).click();
  await expect(page).toHaveURL(/f\.sealer=epoxy_resin/);
  const chip = page.getByTestId('filter-chip').filter({ hasText: 'Sealer: Epoxy resin' });
  await expect(chip).toBeVisible();
  await expect(page.getByTestId('factor-level')).toHaveCount(1);
  await expect(page.getByTestId('factor-level').first()).toContainText(String(epoxy.cases));
  await shots(page, 'outcomes-factor-filtered', testInfo);

  await page.getByRole('navigation', { name: 'Outcome views' }).getByRole('link', { name: 'Overview' }).click();
  await expect(page).toHaveURL(/\/outcomes\?.*f\.sealer=epoxy_resin/);
  await expect(chip).toBeVisible();
  await expect(page.getByTestId('selection-cases')).toHaveText(String(epoxy.cases));
  const csvHref = await page.getByRole('link', { name: 'Download this table (CSV)' }).getAttribute('href');
  expect(csvHref).toContain('f.sealer=epoxy_resin');
  const csv = await (await page.request.get(csvHref!)).text();
  expect(csv).toContain(`Cases followed,,,,,${epoxy.cases},`);
  await shots(page, 'outcomes-overview-filtered', testInfo);

  await page.getByRole('navigation', { name: 'Outcome views' }).getByRole('link', { name: 'Survival curves' }).click();
  await expect(page).toHaveURL(/\/outcomes\/curves\?.*f\.sealer=epoxy_resin/);
  await expect(chip).toBeVisible();
  // the curves' own form keeps the filter too
  await page.getByLabel('Split by').selectOption('density');
  await page.getByRole('button', { name: 'Show' }).last().click();
  await expect(page).toHaveURL(/factor=density/);
  await expect(page).toHaveURL(/f\.sealer=epoxy_resin/);
  await expect(page.getByTestId('survival-chart').locator('svg.recharts-surface').first()).toBeVisible();
  const [curvesSvg] = await Promise.all([page.waitForEvent('download'), page.getByRole('button', { name: 'Download SVG' }).first().click()]);
  expect(curvesSvg.suggestedFilename()).toBe('lamina-healing-by-density.svg');
  await shots(page, 'outcomes-curves-filtered', testInfo);

  // removing the chip removes the filter
  await chip.click();
  await expect(page).not.toHaveURL(/f\.sealer/);
  await expect(page.getByTestId('filter-chip')).toHaveCount(0);

  // a level that is not one: the page says so and offers the chip to remove it
  await page.goto('/outcomes/factor?factor=sealer&f.sealer=snake_oil');
  await expect(page.getByText('“snake_oil” is not a level of sealer.')).toBeVisible();
  await expect(page.getByTestId('filter-chip')).toHaveCount(1);
});
