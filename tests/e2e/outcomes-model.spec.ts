import { test, expect, type Page } from '@playwright/test';
import { firstLoadJsKb, signInAs } from './support';

/**
 * Issue 12, item 4: the lead and a clinician open the multivariable view, see the Cox model's forest
 * plot and both tables (their figures are the API's; the API's equal the engine in
 * tests/integration/outcomes-model.test.ts), choose factors, and see the events-per-variable warning
 * on a small selection. Screenshots at 1366 and 375 px are kept as test artefacts.
 */
interface Fit {
  cases: number;
  patients: number;
  events: number;
  lowEpv: boolean;
  error: string | null;
  terms: { label: string; term: string; ratio: number }[];
}
type Api = { result: { cox: Fit; logistic: Fit } };
/** The page's number format (app/(app)/outcomes/model/page.tsx). */
const fmt = (v: number) => (v >= 100 || v < 0.01 ? v.toExponential(1) : v.toFixed(2));

async function shots(page: Page, name: string, testInfo: { outputPath: (name: string) => string }) {
  for (const width of [1366, 375]) {
    await page.setViewportSize({ width, height: 900 });
    await page.screenshot({ path: testInfo.outputPath(`${name}-${width}.png`), fullPage: true });
  }
  await page.setViewportSize({ width: 1366, height: 900 });
}

async function checkAgainstApi(page: Page, query: string) {
  const api = (await (await page.request.get(`/api/outcomes/model${query}`)).json()) as Api;
  for (const model of ['cox', 'logistic'] as const) {
    const fit = api.result[model];
    await expect(page.getByTestId(`model-${model}-counts`)).toContainText(`${fit.cases} `);
    await expect(page.getByTestId(`model-${model}-counts`)).toContainText(`of ${fit.patients} patients`);
    if (fit.terms.length) {
      await expect(page.getByTestId(`model-${model}-term`)).toHaveCount(fit.terms.length);
      await expect(page.getByTestId(`model-${model}-term`).first().locator('td').nth(2)).toHaveText(fmt(fit.terms[0]!.ratio));
    } else {
      await expect(page.getByTestId(`model-${model}-error`)).toBeVisible();
    }
    await expect(page.getByTestId(`model-${model}-epv`)).toHaveCount(fit.lowEpv ? 1 : 0);
  }
  return api;
}

test('the practice lead fits the models, chooses factors and sees the events-per-variable warning on a small selection', async ({ page }, testInfo) => {
  test.setTimeout(120_000);
  await signInAs(page, 'auditor');
  await page.goto('/outcomes');
  await page.getByRole('navigation', { name: 'Outcome views' }).getByRole('link', { name: 'Multivariable' }).click();
  await expect(page.getByRole('heading', { name: 'Time to failure to heal: Cox model' })).toBeVisible();
  const api = await checkAgainstApi(page, '');
  expect(api.result.cox.error).toBeNull();
  await expect(page.getByTestId('model-cox-forest').locator('svg.recharts-surface')).toBeVisible();
  await expect(page.getByTestId('model-cox-forest').locator('.recharts-errorBar')).toHaveCount(api.result.cox.terms.length);
  await expect(page.getByText('associations in the practice’s own cases, not causes')).toBeVisible();
  await expect(page.getByText(/Peduzzi|robust standard errors clustered by patient/).first()).toBeVisible();
  await shots(page, 'outcomes-model-lead', testInfo);

  // choose factors: add the tooth group, lesion as a diameter
  await page.getByLabel('Tooth group').check();
  await page.getByLabel('Diameter, per mm').check();
  await page.getByRole('button', { name: 'Fit the models' }).click();
  await expect(page).toHaveURL(/covariate=group/);
  await expect(page.getByTestId('model-cox').getByRole('cell', { name: 'Tooth group' }).first()).toBeVisible();
  await expect(page.getByTestId('model-cox').getByRole('cell', { name: 'per mm' })).toBeVisible();
  await checkAgainstApi(page, '?covariates=kind,lesion,pai,group&lesionAs=numeric');

  // a small selection with many factors: fewer than 10 events per variable
  const small = '?kind=nonsurgical_retreatment&covariates=kind,lesion,pai,group,arch,year&paiAs=levels';
  await page.goto(`/outcomes/model${small}`);
  const smallApi = await checkAgainstApi(page, small);
  expect(smallApi.result.logistic.lowEpv || smallApi.result.cox.lowEpv).toBe(true);
  await expect(page.getByText('Fewer than 10 events per variable').first()).toBeVisible();
  await shots(page, 'outcomes-model-lead-small', testInfo);

  // both tables as CSV
  const csv = await page.request.get(`/api/outcomes/export${small}&view=model`);
  expect(csv.headers()['content-type']).toContain('text/csv');
  expect(await csv.text()).toMatch(/^Model,Outcome,Factor,/);
  // bad input: said on the page, not a crash
  await page.goto('/outcomes/model?covariates=horoscope');
  await expect(page.getByText('Some choices need attention')).toBeVisible();
});

test('a clinician fits the models on their own cases', async ({ page }, testInfo) => {
  test.setTimeout(90_000);
  await signInAs(page, 'clinician');
  await page.goto('/outcomes/model');
  await expect(page.getByText('Your own cases')).toBeVisible();
  await expect(page.getByRole('checkbox', { name: 'Clinician' })).toHaveCount(0);
  const api = await checkAgainstApi(page, '');
  if (api.result.cox.terms.length) {
    await expect(page.getByTestId('model-cox-forest').locator('svg.recharts-surface')).toBeVisible();
    await expect(page.getByTestId('model-cox-forest').locator('.recharts-errorBar')).toHaveCount(api.result.cox.terms.length);
  }
  await shots(page, 'outcomes-model-clinician', testInfo);
});

test('the multivariable page loads under 200 kB of JavaScript (gzip) on a first visit; the chart comes later', async ({ page }, testInfo) => {
  await signInAs(page, 'auditor');
  const kb = await firstLoadJsKb(page, '/outcomes/model');
  await testInfo.attach('first-load-js-model.json', { body: JSON.stringify({ '/outcomes/model': kb }), contentType: 'application/json' });
  console.log('First Load JS /outcomes/model (kB gzip):', kb);
  expect(kb).toBeLessThan(200);
});
