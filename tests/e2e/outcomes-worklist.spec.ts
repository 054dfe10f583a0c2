import { test, expect } from '@playwright/test';
import { firstLoadJsKb, signInAs } from './support';

/**
 * Issue 12, item 7: the non-healing worklist as the practice lead (reads the practice's list,
 * filters by clinician, downloads it; records nothing) and as a clinician (their own cases;
 * records a watch-and-re-review, then a retreatment that opens a linked case of the tooth).
 * The list itself is checked against the rule in tests/integration/outcomes-worklist.test.ts.
 * Screenshots at 1366 and 375 px are kept as test artefacts.
 */
interface Page {
  rows: Row[];
  total: number;
  page: number;
  pageSize: number;
  counts: Record<'decide' | 'overdue' | 'in_hand', number>;
}

interface Row {
  caseId: string;
  tooth: string;
  clinician: { id: string; name: string };
  canDecide: boolean;
  urgency: string;
  decision: { step: string } | null;
  laterCase: { id: string } | null;
}

const inDays = (n: number) => new Date(Date.now() + n * 86_400_000).toISOString().slice(0, 10);

test('the practice lead reads the practice’s worklist, filters it by clinician and downloads it', async ({ page }, testInfo) => {
  test.setTimeout(90_000);
  await signInAs(page, 'auditor');
  await page.goto('/outcomes');
  await page.getByRole('link', { name: 'Non-healing worklist' }).click();
  await expect(page.getByRole('heading', { name: 'Non-healing worklist' })).toBeVisible();
  await expect(page.getByText('The next step is the clinician’s decision')).toBeVisible();
  const api = (await (await page.request.get('/api/outcomes/worklist')).json()) as Page;
  expect(api.rows.length).toBeGreaterThan(0);
  await expect(page.getByTestId('worklist-row')).toHaveCount(api.rows.length);
  await expect(page.getByTestId('worklist-counts')).toContainText(`${api.total} ${api.total === 1 ? 'case' : 'cases'}: ${api.counts.decide} to decide`);
  await expect(page.getByTestId('worklist-row').first()).toHaveAttribute('data-case', api.rows[0]!.caseId);
  expect(api.rows.every((r) => !r.canDecide)).toBe(true);
  await expect(page.locator('summary', { hasText: 'Record the next step' })).toHaveCount(0);
  for (const width of [1366, 375]) {
    await page.setViewportSize({ width, height: 900 });
    await page.screenshot({ path: testInfo.outputPath(`worklist-lead-${width}.png`), fullPage: true });
  }
  await page.setViewportSize({ width: 1366, height: 900 });
  // filter by one clinician: the URL carries it, the rows are theirs
  const one = api.rows[0]!.clinician;
  await page.getByLabel('Clinician').selectOption(one.id);
  await page.getByRole('button', { name: 'Show' }).click();
  await expect(page).toHaveURL(new RegExp(`clinician=${one.id}`));
  const mine = (await (await page.request.get(`/api/outcomes/worklist?clinician=${one.id}`)).json()) as { rows: Row[] };
  await expect(page.getByTestId('worklist-row')).toHaveCount(mine.rows.length);
  expect(mine.rows.every((r) => r.clinician.id === one.id)).toBe(true);
  // the CSV of the same filter
  const csv = await page.request.get(`/api/outcomes/worklist/export?clinician=${one.id}`);
  expect(csv.headers()['content-type']).toContain('text/csv');
  const lines = (await csv.text()).trim().split(/\r?\n/);
  expect(lines[0]).toMatch(/^Urgency,Case,Tooth \(FDI\),/);
  expect(lines.length).toBeGreaterThanOrEqual(mine.rows.length + 1);
  // the list is paged on the server: one row a page here, the pager keeps the filter (a period that changes nothing)
  expect(api.total).toBeGreaterThan(1);
  await page.goto('/outcomes/worklist?from=1900-01-01&pageSize=1');
  await expect(page.getByTestId('worklist-row')).toHaveCount(1);
  await expect(page.getByTestId('worklist-row')).toHaveAttribute('data-case', api.rows[0]!.caseId);
  const pager = page.getByRole('navigation', { name: 'Pages' });
  await expect(pager).toContainText(`Page 1 of ${api.total}`);
  await pager.getByRole('link', { name: 'Next →' }).click();
  await expect(page).toHaveURL(/from=1900-01-01.*page=2|page=2.*from=1900-01-01/);
  const second = (await (await page.request.get('/api/outcomes/worklist?from=1900-01-01&pageSize=1&page=2')).json()) as Page;
  expect(second).toMatchObject({ page: 2, pageSize: 1, total: api.total });
  await expect(page.getByTestId('worklist-row')).toHaveAttribute('data-case', second.rows[0]!.caseId);
  await expect(pager).toContainText(`Page 2 of ${api.total}`);
  // the lead cannot record a step
  const refused = await page.request.post(`/api/outcomes/worklist/${api.rows[0]!.caseId}/decisions`, { data: { step: 'watch', date: inDays(30) } });
  expect(refused.status()).toBe(403);
  // an empty filter says so
  await page.goto('/outcomes/worklist?from=2099-01-01');
  await expect(page.getByRole('heading', { name: 'No case needs a decision' })).toBeVisible();
  await page.screenshot({ path: testInfo.outputPath('worklist-empty-1366.png'), fullPage: true });
});

test('a clinician records a re-review and then a retreatment, which opens a linked case of the tooth', async ({ page }, testInfo) => {
  test.setTimeout(120_000);
  await signInAs(page, 'clinician');
  await page.goto('/outcomes/worklist');
  await expect(page.getByRole('heading', { name: 'Non-healing worklist' })).toBeVisible();
  await expect(page.getByText('Your own cases')).toBeVisible();
  const api = (await (await page.request.get('/api/outcomes/worklist')).json()) as { rows: Row[] };
  const target = api.rows.find((r) => r.canDecide && !r.laterCase && !r.decision);
  expect(target, 'a case of the clinician to decide').toBeTruthy();
  expect(new Set(api.rows.map((r) => r.clinician.id)).size).toBe(1);
  for (const width of [1366, 375]) {
    await page.setViewportSize({ width, height: 900 });
    await page.screenshot({ path: testInfo.outputPath(`worklist-clinician-${width}.png`), fullPage: true });
  }
  await page.setViewportSize({ width: 1366, height: 900 });

  const row = page.locator(`[data-testid="worklist-row"][data-case="${target!.caseId}"]`);
  await row.locator('summary', { hasText: 'Record the next step' }).click();
  const form = row.getByRole('form', { name: `Next step for tooth ${target!.tooth}` });
  // a refusal is shown on its field, nothing typed is lost
  await form.getByLabel('Next step').selectOption('watch');
  await form.getByLabel('Re-review on').fill(inDays(0));
  await form.getByRole('button', { name: 'Record the next step' }).click();
  await expect(form.getByText('A re-review is planned ahead')).toBeVisible();
  await form.getByLabel('Re-review on').fill(inDays(90));
  await form.getByLabel('Note (optional, 300 characters)').fill('New film in three months');
  await form.getByRole('button', { name: 'Record the next step' }).click();
  await expect(page.getByText('Watch and re-review recorded for tooth')).toBeVisible();
  await expect(row.getByTestId('worklist-decision')).toContainText('Watch and re-review');
  await expect(row.getByTestId('worklist-decision')).toContainText('New film in three months');
  await row.screenshot({ path: testInfo.outputPath('worklist-row-watch.png') });

  // then a retreatment: a new case of the tooth, in progress, linked; recording it again opens no second one
  if (!(await row.getByRole('form').isVisible())) await row.locator('summary', { hasText: 'Change the next step' }).click();
  const again = row.getByRole('form', { name: `Next step for tooth ${target!.tooth}` });
  await again.getByLabel('Next step').selectOption('retreat');
  await again.getByLabel('Planned for').fill(inDays(14));
  await again.getByLabel('Apical diagnosis (starts the new case)').selectOption('asymptomatic_apical_periodontitis');
  await again.getByLabel('Note (optional, 300 characters)').fill('Retreat in two weeks');
  await again.getByRole('button', { name: 'Record the next step' }).click();
  await expect(page.getByText('A new case of the tooth was opened')).toBeVisible();
  await expect(row.getByTestId('worklist-later-case')).toContainText('Non-surgical retreatment');
  await expect(row.getByTestId('worklist-later-case')).toContainText('in progress');
  await expect(row.getByTestId('worklist-decision')).toContainText('1 earlier step kept');
  await page.screenshot({ path: testInfo.outputPath('worklist-clinician-after-1366.png'), fullPage: true });
  const repeat = await page.request.post(`/api/outcomes/worklist/${target!.caseId}/decisions`, {
    data: { step: 'retreat', date: inDays(14), note: 'Retreat in two weeks', apicalDiagnosis: 'asymptomatic_apical_periodontitis' },
  });
  expect(repeat.status()).toBe(200);
  expect(((await repeat.json()) as { created: boolean }).created).toBe(false);
  const history = (await (await page.request.get(`/api/outcomes/worklist/${target!.caseId}/decisions`)).json()) as { decisions: { step: string }[] };
  expect(history.decisions.map((d) => d.step)).toEqual(['retreat', 'watch']);

  // the linked case is visible, in progress, naming the earlier case
  await row.getByTestId('worklist-later-case').getByRole('link').click();
  await expect(page.getByRole('heading', { level: 1 })).toContainText(target!.tooth);
  await expect(page.getByText('Non-surgical retreatment').first()).toBeVisible();
  await page.screenshot({ path: testInfo.outputPath('worklist-linked-case-1366.png'), fullPage: true });
});

test('the worklist page loads under 200 kB of JavaScript (gzip); the next-step form comes later', async ({ page }, testInfo) => {
  await signInAs(page, 'clinician');
  const kb = await firstLoadJsKb(page, '/outcomes/worklist');
  await testInfo.attach('first-load-js-worklist.json', { body: JSON.stringify({ '/outcomes/worklist': kb }), contentType: 'application/json' });
  console.log('First Load JS /outcomes/worklist (kB gzip):', kb);
  expect(kb).toBeLessThan(200);
});
