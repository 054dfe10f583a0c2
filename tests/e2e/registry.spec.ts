import { test, expect } from '@playwright/test';
import { signInAs } from './support';

test('a clinician enters a case through the form and sees its recall plan', async ({ page }) => {
  const registry = `E2E-${Date.now()}`;
  await signInAs(page, 'clinician');
  await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Cases' }).click();
  await page.getByRole('link', { name: 'New case' }).click();
  await page.getByRole('link', { name: 'New patient' }).click();

  const patient = page.getByRole('form', { name: 'New patient' });
  await patient.getByLabel('Registry number').fill(registry);
  await patient.getByLabel('Date of birth').fill('1971-03-14');
  await patient.getByLabel('Given name').fill('Wren');
  await patient.getByLabel('Family name').fill('Ashcombe');
  await patient.getByLabel('E-mail').fill('wren.ashcombe@patients.lamina-demo.invalid');
  await patient.getByRole('button', { name: 'Save and record a case' }).click();

  const form = page.getByRole('form', { name: 'New case' });
  await expect(form.getByText(`Ashcombe, Wren (${registry})`)).toBeVisible();
  // A wrong tooth number is explained beside the field, and nothing typed is lost.
  await form.getByLabel('Tooth (FDI)').fill('19');
  await form.getByLabel('Start date').fill('2026-05-04');
  await form.getByRole('button', { name: 'Save case' }).click();
  await expect(form.getByText(/19 is no tooth/).first()).toBeVisible();
  await expect(form.getByLabel('Start date')).toHaveValue('2026-05-04');

  await form.getByLabel('Tooth (FDI)').fill('36');
  await expect(form.getByText('lower left first molar')).toBeVisible();
  await form.getByLabel('Completion date (canal filling)').fill('2026-05-18');
  await form.getByLabel('Pulpal diagnosis').selectOption({ label: 'Pulp necrosis' });
  await form.getByLabel('Apical diagnosis').selectOption({ label: 'Asymptomatic apical periodontitis' });
  await form.getByLabel('Periapical index (PAI) before treatment').selectOption('4');
  await form.getByLabel('Largest lesion diameter (mm)').fill('3.5');
  await form.getByLabel('Name').fill('MB');
  await form.getByLabel('Working length (mm)').fill('20.5');
  await form.getByLabel('Apical size (ISO)').selectOption('30');
  await form.getByLabel('Filling end to apex (mm)').fill('0.5');
  await expect(form.getByText('Within 0–2 mm of the apex')).toBeVisible();
  await form.getByRole('button', { name: 'Save case' }).click();

  await expect(page.getByRole('heading', { level: 1 })).toContainText('Tooth 36');
  const plan = page.getByRole('table', { name: 'Recall visits' });
  // The demo practice's recall policy: 6, 12, 24 and 48 months after completion.
  await expect(plan.getByTestId('visit-6')).toContainText('18 Nov 2026');
  await expect(plan.getByTestId('visit-12')).toContainText('18 May 2027');
  await expect(plan.getByTestId('visit-24')).toContainText('18 May 2028');
  await expect(plan.getByTestId('visit-6')).toContainText(/Planned|Missed|Invited/);
});

function csvLine(values: string[]) {
  return values.map((v) => (/[",\n]/.test(v) ? `"${v.replace(/"/g, '""')}"` : v)).join(',');
}

test('a coordinator imports a CSV with one bad row, sees the row’s error, fixes it and imports it', async ({ page }) => {
  await signInAs(page, 'coordinator');
  const template = await (await page.request.get('/api/cases/import')).text();
  const [header, example] = template.trim().split(/\r?\n/);
  const cols = header!.split(',');
  const base = example!.split(',');
  const stamp = Date.now();
  const row = (registry: string, tooth: string) => {
    const v = [...base];
    v[cols.indexOf('registry_number')] = registry;
    v[cols.indexOf('email')] = `${registry.toLowerCase()}@patients.lamina-demo.invalid`;
    v[cols.indexOf('tooth_fdi')] = tooth;
    return csvLine(v);
  };
  const file = (bad: string) => ({
    name: 'past-cases.csv',
    mimeType: 'text/csv',
    buffer: Buffer.from([header, row(`IMP-${stamp}-A`, '46'), row(`IMP-${stamp}-B`, bad)].join('\n')),
  });

  await page.goto('/cases/import');
  await page.getByLabel('Spreadsheet (CSV or .xlsx)').setInputFiles(file('19'));
  await page.getByRole('button', { name: 'Check the file' }).click();
  const problems = page.getByRole('table', { name: 'Problems in the file' });
  await expect(problems).toBeVisible();
  await expect(problems.getByRole('row')).toHaveCount(2); // header + one problem
  await expect(problems.getByRole('row').nth(1)).toContainText('3');
  await expect(problems.getByRole('row').nth(1)).toContainText('tooth_fdi');
  await expect(page.getByText('nothing was imported')).toBeVisible();
  await expect(page.getByRole('button', { name: 'Import', exact: true })).toBeDisabled();
  await expect(page.getByRole('button', { name: 'Import the 1 valid row only' })).toBeVisible();

  await page.getByLabel('Spreadsheet (CSV or .xlsx)').setInputFiles(file('47'));
  await page.getByRole('button', { name: 'Check the file' }).click();
  await expect(page.getByText('The file is clean: 2 cases')).toBeVisible();
  await page.getByRole('button', { name: 'Import 2 cases' }).click();
  await expect(page.getByText(/Imported 2 cases/)).toBeVisible();

  await page.goto(`/cases?q=IMP-${stamp}`);
  await expect(page.getByRole('table', { name: 'Cases' }).getByRole('row')).toHaveCount(3);
});

test('a researcher cannot open the identifiable case list', async ({ page }) => {
  await signInAs(page, 'researcher');
  const res = await page.goto('/cases');
  expect(res?.status()).toBe(403);
  expect((await page.request.get('/api/cases')).status()).toBe(403);
});

test('a file chosen before the import panel’s script has run is still read: the check appears once the panel is live', async ({ page }) => {
  await signInAs(page, 'coordinator');
  const template = await (await page.request.get('/api/cases/import')).text();
  // Hold back the script that holds the import panel, as a slow connection would: the page shows,
  // but the panel is not yet live when the file is chosen, so its change event finds no listener.
  let release!: () => void;
  const held = new Promise<void>((resolve) => (release = resolve));
  let heldScripts = 0;
  await page.route('**/_next/static/chunks/**', async (route) => {
    const response = await route.fetch();
    const body = await response.text();
    if (body.includes('Spreadsheet (CSV or .xlsx)')) {
      heldScripts += 1;
      await held;
    }
    await route.fulfill({ response, body });
  });
  await page.goto('/cases/import', { waitUntil: 'commit' });
  await page.getByLabel('Spreadsheet (CSV or .xlsx)').setInputFiles({ name: 'early.csv', mimeType: 'text/csv', buffer: Buffer.from(template) });
  expect(heldScripts).toBeGreaterThan(0);
  await expect(page.getByRole('button', { name: 'Check the file' })).toHaveCount(0);
  release();
  await expect(page.getByRole('button', { name: 'Check the file' })).toBeVisible();
});
