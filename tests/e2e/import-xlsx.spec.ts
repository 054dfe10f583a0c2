import { test, expect } from '@playwright/test';
import ExcelJS from 'exceljs';
import { demoUser, signInAs } from './support';

/**
 * Issue 16: a practice's own .xlsx (written here by exceljs, invented data) — its own headers,
 * dates of birth written DD/MM/YYYY as text, treatment dates as date cells, a code of its own —
 * is uploaded, its columns mapped (one by hand), its codes mapped, a bad row found and fixed in
 * the file, and imported. The second upload gets the saved mapping back.
 */
async function workbook(stamp: number, badTooth: number): Promise<Buffer> {
  const wb = new ExcelJS.Workbook();
  const ws = wb.addWorksheet('Endo list');
  ws.addRow(['Pat. no', 'First name', 'Surname', 'DOB', 'Sex', 'Recall OK', 'Recall by', 'Research', 'Consented', 'Patient email', 'Behandler', 'Zahn', 'Procedure', 'Start', 'Finished', 'Pulp dx', 'Apical dx', 'PAI', 'Lesion', 'Canal 1']);
  const d = (y: number, m: number, day: number) => new Date(Date.UTC(y, m - 1, day));
  const op = demoUser('clinician').email;
  const row = (n: string, dob: string, tooth: number, given: string) => [
    `XL-${stamp}-${n}`, given, 'Pennyworth', dob, 'F', 'Y', 'email', 'N', d(2022, 3, 1), `xl${stamp}${n}@patients.lamina-demo.invalid`, op, tooth, 'Endo', d(2022, 3, 1), d(2022, 3, 15),
    'Pulp necrosis', 'Asymptomatic apical periodontitis', 4, 2.5, 'MB',
  ];
  ws.addRow(row('A', '25/12/1970', 36, 'Ivy'));
  ws.addRow(row('B', '03/04/1981', badTooth, 'Rue'));
  ws.addRow(row('C', '14/07/1966', 46, 'Fen'));
  ws.addRow(row('D', '01/10/1990', 26, 'Sol'));
  return Buffer.from(await wb.xlsx.writeBuffer());
}

test('a coordinator maps an .xlsx with its own headers, fixes a bad row and imports it', async ({ page }) => {
  test.setTimeout(120_000);
  await signInAs(page, 'coordinator');
  const stamp = Date.now();
  const upload = async (badTooth: number) =>
    page.getByLabel('Spreadsheet (CSV or .xlsx)').setInputFiles({
      name: 'endo-list.xlsx',
      mimeType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
      buffer: await workbook(stamp, badTooth),
    });

  await page.goto('/cases/import');
  await upload(19);
  const mapping = page.getByRole('table', { name: 'Column mapping' });
  await expect(mapping).toBeVisible();
  await expect(page.getByText(/Excel workbook: 4 rows/)).toBeVisible();
  // Proposed by name and by values; the date order suggested from “25/12/1970”.
  await expect(page.getByLabel('Lamina field for “Surname”')).toHaveValue('family_name');
  await expect(page.getByLabel('Lamina field for “Zahn”')).toHaveValue('tooth_fdi');
  await expect(page.getByText(/Proposed: values look like FDI tooth numbers/)).toBeVisible();
  await expect(page.getByLabel(/Day-month-year/)).toBeChecked();
  await expect(page.getByText(/2 dates, such as “25\/12\/1970”, start with a number above 12/)).toBeVisible();
  // E-mails could be any of three fields: the clinician's column is mapped by hand.
  await expect(page.getByLabel('Lamina field for “Behandler”')).toHaveValue('');
  await page.getByLabel('Lamina field for “Behandler”').selectOption('operator_email');
  // The practice's own code.
  await page.getByLabel('Code for “Endo” in Procedure').selectOption('primary_treatment');
  await page.screenshot({ path: test.info().outputPath('import-mapping-1366.png'), fullPage: true });

  await page.getByRole('button', { name: 'Check the file' }).click();
  const problems = page.getByRole('table', { name: 'Problems in the file' });
  await expect(problems).toBeVisible();
  await expect(problems.getByRole('row')).toHaveCount(2);
  await expect(problems.getByRole('row').nth(1)).toContainText('3');
  await expect(problems.getByRole('row').nth(1)).toContainText('Zahn');
  await expect(page.getByRole('button', { name: 'Import', exact: true })).toBeDisabled();
  // or the valid rows only, the bad one left out (with a CSV of it and its reasons)
  await expect(page.getByRole('button', { name: 'Import the 3 valid rows only' })).toBeEnabled();
  await page.screenshot({ path: test.info().outputPath('import-problems-1366.png'), fullPage: true });
  await page.setViewportSize({ width: 375, height: 800 });
  await page.screenshot({ path: test.info().outputPath('import-problems-375.png'), fullPage: true });
  await page.setViewportSize({ width: 1366, height: 900 });

  // The row fixed in the file; the second upload gets the saved mapping back.
  await upload(47);
  await expect(page.getByText(/the ones your practice saved/)).toBeVisible();
  await expect(page.getByLabel('Lamina field for “Behandler”')).toHaveValue('operator_email');
  await expect(page.getByLabel('Code for “Endo” in Procedure')).toHaveValue('primary_treatment');
  await page.getByRole('button', { name: 'Check the file' }).click();
  await expect(page.getByText('The file is clean: 4 cases')).toBeVisible();
  await page.getByRole('button', { name: 'Import 4 cases' }).click();
  await expect(page.getByText(/Imported 4 cases/)).toBeVisible();
  await page.setViewportSize({ width: 375, height: 800 });
  await page.screenshot({ path: test.info().outputPath('import-done-375.png'), fullPage: true });

  await page.setViewportSize({ width: 1366, height: 900 });
  await page.goto(`/cases?q=XL-${stamp}`);
  await expect(page.getByRole('table', { name: 'Cases' }).getByRole('row')).toHaveCount(5);
});
