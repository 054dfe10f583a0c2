import { test, expect, type Browser, type Page } from '@playwright/test';
import { demoUser, signInAs } from './support';

/**
 * Visits and reviews (issue 10): the clinician records the review at the confirmed visit of the
 * day and marks it attended in one step; the coordinator marks a visit missed with a reason (and
 * undoes it the same day); a review is corrected and its earlier version shown as superseded.
 * Screenshots go to the test's output folder (test-results/playwright/…).
 */

/** 'YYYY-MM-DD' of a date shifted by whole months (clamped to the month's end), in UTC. */
function monthsBefore(day: string, months: number): string {
  const [y, m, d] = day.split('-').map(Number) as [number, number, number];
  const first = new Date(Date.UTC(y, m - 1 - months, 1));
  const last = new Date(Date.UTC(first.getUTCFullYear(), first.getUTCMonth() + 1, 0)).getUTCDate();
  return new Date(Date.UTC(first.getUTCFullYear(), first.getUTCMonth(), Math.min(d, last))).toISOString().slice(0, 10);
}
const today = new Date().toISOString().slice(0, 10);

// Each test enters its own patient and case through the API first: more than the default 30 s on a busy machine.
test.describe.configure({ timeout: 120_000 });

interface Visit {
  id: string;
  milestone: number;
  status: string;
}

/** A patient and a case completed 12 months ago, entered by the clinician through the API: its 12-month visit is due today. */
async function caseDueToday(clinician: Page, tag: string): Promise<{ caseId: string; visits: Visit[] }> {
  const { clinicians } = (await (await clinician.request.get('/api/clinicians')).json()) as { clinicians: { id: string; email: string }[] };
  const me = clinicians.find((c) => c.email === demoUser('clinician').email)!;
  const registry = `E2E-${tag}-${Date.now()}`;
  const p = await clinician.request.post('/api/patients', {
    data: {
      registryNumber: registry,
      givenName: 'Ottilie',
      familyName: `Marchbank ${tag}`,
      dateOfBirth: '1968-09-02',
      sex: 'female',
      email: `ottilie.${tag.toLowerCase()}@patients.lamina-demo.invalid`,
      recallContact: true,
      recallChannel: 'email',
      researchUse: false,
      consentDate: '2025-01-10',
    },
  });
  expect(p.status(), await p.text()).toBe(201);
  const patient = ((await p.json()) as { patient: { id: string } }).patient;
  const completion = monthsBefore(today, 12);
  const c = await clinician.request.post('/api/cases', {
    data: {
      patientId: patient.id,
      operatorId: me.id,
      tooth: 36,
      kind: 'primary_treatment',
      startDate: monthsBefore(completion, 1),
      completionDate: completion,
      pulpalDiagnosis: 'pulp_necrosis',
      apicalDiagnosis: 'asymptomatic_apical_periodontitis',
      paiScore: 4,
      lesionDiameterMm: 3.5,
      canals: [{ name: 'MB', workingLengthMm: 20.5, apicalSize: 30, fillToApexMm: 0.5 }],
      fillingTechnique: 'continuous_wave',
      sealerClass: 'epoxy_resin',
      coronalRestoration: 'direct_composite',
    },
  });
  expect(c.status(), await c.text()).toBe(201);
  const created = ((await c.json()) as { case: { id: string; visits: Visit[] } }).case;
  return { caseId: created.id, visits: created.visits };
}

async function asRole(browser: Browser, role: 'coordinator' | 'clinician'): Promise<Page> {
  const page = await (await browser.newContext()).newPage();
  await signInAs(page, role);
  return page;
}

test('the clinician sees the confirmed patient of the day, records the review and marks the visit attended in one step', async ({ page, browser }) => {
  await signInAs(page, 'clinician');
  const { caseId, visits } = await caseDueToday(page, 'V1');
  const twelve = visits.find((v) => v.milestone === 12)!;
  // The coordinator booked the patient for today.
  const coordinator = await asRole(browser, 'coordinator');
  const booked = await coordinator.request.patch(`/api/visits/${twelve.id}`, { data: { status: 'confirmed', bookedDate: today } });
  expect(booked.status(), await booked.text()).toBe(200);

  await page.goto(`/cases/${caseId}`);
  const row = page.getByRole('table', { name: 'Recall visits' }).getByTestId('visit-12');
  await expect(row).toContainText('Confirmed');
  await expect(row).toContainText('Visit of the day');
  await row.getByRole('link', { name: 'Record the review' }).click();

  const form = page.getByRole('form', { name: 'Record a review' });
  await expect(form.getByLabel('At visit')).toHaveValue(twelve.id);
  await expect(form.getByText('Saving marks this visit attended.')).toBeVisible();
  await form.getByLabel('Periapical index (PAI) now').selectOption('1');
  await form.getByLabel('Largest lesion diameter now (mm)').fill('0');
  await form.getByLabel('Other findings').fill('Crown intact, no tenderness.');
  await page.screenshot({ path: test.info().outputPath('review-visit-of-the-day-form.png'), fullPage: true });
  await form.getByRole('button', { name: 'Save review and mark attended' }).click();

  await expect(row).toContainText('Attended');
  const reviews = page.getByRole('table', { name: 'Reviews' });
  await expect(reviews).toContainText('12 months');
  await expect(reviews).toContainText('Other findings: Crown intact, no tenderness.');
  await expect(page.locator('section[aria-labelledby="timeline"]')).toContainText('Crown intact, no tenderness.');
  await page.screenshot({ path: test.info().outputPath('review-visit-of-the-day-saved.png'), fullPage: true });
});

test('the coordinator marks a visit missed with a reason and undoes it the same day; a visit not yet begun offers neither', async ({ page, browser }) => {
  const clinician = await asRole(browser, 'clinician');
  const { caseId, visits } = await caseDueToday(clinician, 'V2');
  const twelve = visits.find((v) => v.milestone === 12)!;
  await signInAs(page, 'coordinator');
  await page.goto(`/cases/${caseId}`);
  const plan = page.getByRole('table', { name: 'Recall visits' });
  const row = plan.getByTestId('visit-12');

  // The 24-month visit is far off: attended and missed are not offered.
  const far = plan.getByTestId('visit-24').getByLabel('Change the 24-month visit to');
  await expect(far.locator('option', { hasText: 'Attended' })).toHaveCount(0);
  await expect(far.locator('option', { hasText: 'Missed' })).toHaveCount(0);

  await row.getByLabel('Change the 12-month visit to').selectOption('missed');
  const save = row.getByRole('button', { name: 'Save' });
  await expect(save).toBeDisabled();
  await row.getByLabel('Why was the 12-month visit missed?').selectOption({ label: 'No-show' });
  await page.screenshot({ path: test.info().outputPath('missed-with-reason.png'), fullPage: true });
  await save.click();
  await expect(row).toContainText('Missed');
  await expect(row).toContainText('No-show');

  await row.getByRole('button', { name: 'Undo “missed”' }).click();
  await expect(row).toContainText('Planned');
  await expect(row).not.toContainText('No-show');
  const log = (await (await page.request.get(`/api/recall/visits/${twelve.id}/contact-log`)).json()) as { entries: { note: string | null }[] };
  expect(log.entries.map((e) => e.note)).toEqual(expect.arrayContaining(['No-show', 'Undone: “missed” was recorded by mistake.']));
});

test('a review is corrected with a reason: the earlier version is shown as superseded and the outcome recomputed', async ({ page }) => {
  await signInAs(page, 'clinician');
  const { caseId } = await caseDueToday(page, 'V3');
  const saved = await page.request.post(`/api/cases/${caseId}/reviews`, {
    data: { reviewDate: today, toothStatus: 'present', paiScore: 2, lesionDiameterMm: 0, sinusTract: true, otherFindings: 'Sinus tract buccal.' },
  });
  expect(saved.status(), await saved.text()).toBe(201);

  await page.goto(`/cases/${caseId}`);
  await expect(page.getByTestId('next-step')).toContainText('no next step recorded');
  const reviews = page.getByRole('table', { name: 'Reviews' });
  await expect(reviews).toContainText('Signs: sinus tract. Other findings: Sinus tract buccal.');
  await reviews.getByRole('link', { name: /Correct the review of/ }).click();

  const form = page.getByRole('form', { name: /Correct the review of/ });
  await expect(form.getByLabel('Sinus tract')).toBeChecked();
  await form.getByLabel('Sinus tract').uncheck();
  await form.getByLabel('Other findings').fill('Sinus tract traced to 37 with a gutta-percha cone.');
  await form.getByRole('button', { name: 'Save correction' }).click();
  await expect(form.getByText(/Say why the review is corrected/)).toBeVisible();
  await form.getByLabel('Why is it corrected?').fill('The sinus tract belongs to 37, not this tooth.');
  await form.getByRole('button', { name: 'Save correction' }).click();

  await expect(reviews.getByText('Superseded', { exact: true })).toBeVisible();
  await expect(reviews).toContainText('Corrected by');
  await expect(reviews).toContainText('The sinus tract belongs to 37, not this tooth.');
  await expect(page.getByTestId('next-step')).toHaveCount(0);
  await expect(page.locator('section[aria-labelledby="timeline"]')).toContainText('(superseded)');
  await page.screenshot({ path: test.info().outputPath('review-corrected.png'), fullPage: true });
  await page.setViewportSize({ width: 375, height: 800 });
  await page.screenshot({ path: test.info().outputPath('review-corrected-375.png'), fullPage: true });
});
