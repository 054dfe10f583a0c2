import { readFileSync } from 'node:fs';
import path from 'node:path';
import { test, expect } from '@playwright/test';
import { drawRadiograph, filmDicom } from '../support/film-fixtures';
import { newPatientWithCase, signInAs } from './support';

const fixture = (name: string) => readFileSync(path.resolve(import.meta.dirname, '../support/films', name));

// Issue 13, films: a clinician uploads two films to a case at once (a PNG and a DICOM whose patient
// is someone else), sees their thumbnails with role and date and the DICOM warning; a file that is
// not an image is refused with a retry button, and a retry of a stored file keeps no copy.
test('a clinician uploads two films to a case and sees their thumbnails', async ({ page }, testInfo) => {
  await signInAs(page, 'clinician');
  // A case of its own (a new patient), so the page starts with no films.
  const stamp = Date.now().toString(36);
  const { caseId } = await newPatientWithCase(
    page.request,
    { registryNumber: `E2E-F-${stamp}`, givenName: 'Wren', familyName: 'Ashdown', dateOfBirth: '1971-04-12', sex: 'female', email: `wren.${stamp}@patients.test.invalid` },
    { tooth: 36, startDate: '2025-01-10', completionDate: '2025-01-24', lesionDiameterMm: 3.5 },
  );

  await page.goto(`/cases/${caseId}`);
  const films = page.getByRole('region', { name: 'Films' });
  await expect(films.getByText('No films yet.')).toBeVisible();
  await films.screenshot({ path: testInfo.outputPath('films-empty.png') });

  const other = filmDicom(drawRadiograph(320, 240, 9), { patientName: 'Quill^Runa', patientId: 'Q-77', pixelSpacing: [0.02, 0.02], acquisitionDate: '20250310' });
  await films.getByLabel('The films show').selectOption({ label: 'Post-fill baseline' });
  await films.getByLabel('Upload films').setInputFiles([
    { name: 'baseline.png', mimeType: 'image/png', buffer: fixture('radiograph.png') },
    { name: 'sensor-export.dcm', mimeType: 'application/dicom', buffer: other },
  ]);
  const grid = films.getByRole('list', { name: 'Films of this case' });
  await expect(grid.getByTestId('film')).toHaveCount(2);
  await expect(films.getByRole('list', { name: 'Uploads' }).getByText('Uploaded')).toHaveCount(2);
  await expect(grid).toContainText('Post-fill baseline');
  await expect(grid).toContainText('10 Mar 2025 · DICOM · 0.02 × 0.02 mm per pixel');
  await expect(grid.getByTestId('film-mismatch')).toHaveCount(1);
  await expect(grid.getByTestId('film-mismatch')).toContainText('not this case’s patient');
  await expect(page.getByText('Quill')).toHaveCount(0); // the other patient is never shown
  // The thumbnails load through the authorised route.
  for (const img of await grid.getByRole('img').all()) {
    await img.scrollIntoViewIfNeeded(); // (loading="lazy")
    await expect.poll(() => img.evaluate((el) => ((el as HTMLImageElement).complete ? (el as HTMLImageElement).naturalWidth : 0))).toBeGreaterThan(0);
  }

  // Not an image, whatever its name: refused, with no retry button (the same file would be refused again;
  // a lost connection or a busy server offers one); a second upload of a stored file keeps no copy.
  await films.getByLabel('Upload films').setInputFiles([
    { name: 'notes.png', mimeType: 'image/png', buffer: Buffer.from('%PDF-1.7\n1 0 obj\n<< >>\nendobj\n') },
    { name: 'baseline-again.png', mimeType: 'image/png', buffer: fixture('radiograph.png') },
  ]);
  const failed = films.getByTestId('film-upload').filter({ hasText: 'notes.png' });
  await expect(failed).toContainText('Not uploaded');
  await expect(failed).toContainText('not a PNG, JPEG or DICOM image');
  await expect(failed.getByRole('button', { name: 'Retry' })).toHaveCount(0);
  await expect(films.getByTestId('film-upload').filter({ hasText: 'baseline-again.png' })).toContainText('already stored: no copy kept');
  await expect(grid.getByTestId('film')).toHaveCount(2);
  await page.screenshot({ path: testInfo.outputPath('films-uploaded-1280.png'), fullPage: true });

  await page.reload();
  await expect(page.getByRole('region', { name: 'Films' }).getByTestId('film')).toHaveCount(2);
  await page.setViewportSize({ width: 375, height: 900 });
  await page.getByRole('region', { name: 'Films' }).screenshot({ path: testInfo.outputPath('films-375.png') });
});

test('the practice lead sees the films but cannot upload', async ({ page }, testInfo) => {
  await signInAs(page, 'auditor');
  await page.goto('/cases?stage=completed&sort=completionDate&dir=desc');
  await page.locator('table a[href^="/cases/"]').first().click();
  const films = page.getByRole('region', { name: 'Films' });
  await expect(films).toBeVisible();
  await expect(films.getByLabel('Upload films')).toHaveCount(0);
  await films.screenshot({ path: testInfo.outputPath('films-lead.png') });
});
