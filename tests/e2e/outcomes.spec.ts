import { test, expect, type Page } from '@playwright/test';
import { firstLoadJsKb, signInAs } from './support';

/**
 * Issue 12: the practice lead and a clinician open Outcomes from the navigation, read the
 * overview, a factor and the survival curves with their numbers at risk; each figure on screen is
 * the API's (the API's figures are checked against the engine in tests/integration/outcomes.test.ts).
 * Screenshots at 1366 and 375 px are kept as test artefacts.
 */
async function walk(page: Page, who: string, testInfo: { outputPath: (name: string) => string }) {
  await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Outcomes' }).click();
  await expect(page.getByRole('heading', { name: 'Outcomes', level: 1 })).toBeVisible();
  const api = (await (await page.request.get('/api/outcomes/overview')).json()) as { overview: { cases: number; success: { at: number | string; strict: { x: number; n: number } }[] } };
  expect(api.overview.cases).toBeGreaterThan(0);
  await expect(page.getByTestId('selection-cases')).toHaveText(String(api.overview.cases));
  const at12 = api.overview.success.find((s) => s.at === 12)!;
  await expect(page.getByTestId('selection-success-12')).toContainText(`${at12.strict.x} of ${at12.strict.n}`);
  await expect(page.getByText('support clinical judgement').first()).toBeVisible();
  for (const width of [1366, 375]) {
    await page.setViewportSize({ width, height: 900 });
    await page.screenshot({ path: testInfo.outputPath(`outcomes-overview-${who}-${width}.png`), fullPage: true });
  }
  await page.setViewportSize({ width: 1366, height: 900 });

  // a factor
  await page.getByRole('link', { name: 'By factor' }).click();
  await page.getByLabel('How do we do by…').selectOption('lesion');
  await page.getByRole('button', { name: 'Show' }).last().click();
  await expect(page.getByRole('heading', { name: 'Success by lesion size before treatment' })).toBeVisible();
  await expect(page.getByTestId('factor-level').first()).toBeVisible();
  await expect(page.getByTestId('factor-test')).toContainText(/test|No test/);
  expect(page.url()).toContain('factor=lesion');
  for (const width of [1366, 375]) {
    await page.setViewportSize({ width, height: 900 });
    await page.screenshot({ path: testInfo.outputPath(`outcomes-factor-${who}-${width}.png`), fullPage: true });
  }
  await page.setViewportSize({ width: 1366, height: 900 });

  // the curves, with numbers at risk
  await page.goto('/outcomes/curves?endpoint=tooth&factor=kind');
  await expect(page.getByText('Turnbull is the default')).toBeVisible();
  const atRisk = page.getByTestId('at-risk');
  await expect(atRisk.getByRole('columnheader', { name: '48 mo', exact: true })).toBeVisible();
  const curves = (await (await page.request.get('/api/outcomes/curves?endpoint=tooth&factor=kind')).json()) as { curves: { curves: { atRisk: number[] }[] } };
  await expect(atRisk.locator('tbody tr').first().locator('td').nth(1)).toHaveText(String(curves.curves.curves[0]!.atRisk[0]));
  await expect(page.getByTestId('survival-chart').locator('svg.recharts-surface').first()).toBeVisible();
  await expect(page.getByTestId('log-rank')).toContainText(/Log-rank|No log-rank/);
  // median and restricted mean per level
  await expect(page.getByTestId('median-rmst').getByRole('columnheader', { name: /Restricted mean to 48 months/ })).toBeVisible();
  // a stratum in the URL makes the log-rank test stratified, and the screen says so
  await page.goto('/outcomes/curves?endpoint=healing&method=km&factor=kind&stratum=group');
  await expect(page.locator('#curves-stratum')).toHaveValue('group');
  await expect(page.getByTestId('log-rank')).toContainText(/Stratified log-rank test .*by tooth group|No log-rank/);
  for (const width of [1366, 375]) {
    await page.setViewportSize({ width, height: 900 });
    await page.screenshot({ path: testInfo.outputPath(`outcomes-curves-${who}-${width}.png`), fullPage: true });
  }
}

test('the practice lead reads the overview, a factor and the survival curves', async ({ page }, testInfo) => {
  test.setTimeout(90_000);
  await signInAs(page, 'auditor');
  await walk(page, 'lead', testInfo);
  // the filters are in the URL and shared by the views; the table downloads as CSV
  await page.goto('/outcomes?kind=nonsurgical_retreatment');
  await page.getByRole('link', { name: 'By factor' }).click();
  expect(page.url()).toContain('kind=nonsurgical_retreatment');
  const csv = await page.request.get('/api/outcomes/export?view=factor&factor=kind&kind=nonsurgical_retreatment');
  expect(csv.headers()['content-type']).toContain('text/csv');
  expect(await csv.text()).toMatch(/^Treatment kind,Cases,/);
});

test('a clinician sees their own cases beside the practice overall', async ({ page }, testInfo) => {
  test.setTimeout(90_000);
  await signInAs(page, 'clinician');
  await walk(page, 'clinician', testInfo);
  await page.goto('/outcomes');
  await expect(page.getByRole('heading', { name: 'Your cases' })).toBeVisible();
  await expect(page.getByRole('heading', { name: 'The practice overall' })).toBeVisible();
  await expect(page.getByText('Your own cases')).toBeVisible();
});

test('each outcomes page loads under 200 kB of JavaScript (gzip) on a first visit; the chart comes later', async ({ page }, testInfo) => {
  await signInAs(page, 'auditor');
  const sizes: Record<string, number> = {};
  for (const route of ['/outcomes', '/outcomes/factor', '/outcomes/curves']) {
    sizes[route] = await firstLoadJsKb(page, route);
  }
  await testInfo.attach('first-load-js.json', { body: JSON.stringify(sizes, null, 2), contentType: 'application/json' });
  console.log('First Load JS (kB gzip):', sizes);
  for (const kb of Object.values(sizes)) expect(kb).toBeLessThan(200);
});
