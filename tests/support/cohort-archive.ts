/**
 * Makes a research export (lib/cohorts writeCohortArchive) of invented rows
 * (lib/demo/cohort-rows.ts) into a temporary folder and unzips it with Debian's `unzip`
 * (LAMINA_APT_TEST), for the unit and reference tests.
 */
import { execFileSync } from 'node:child_process';
import { createWriteStream, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import Papa from 'papaparse';
import { writeCohortArchive, type CohortArchiveInput, type CohortExportSummary } from '@/lib/cohorts';
import { syntheticCohortRows, type SyntheticCohortOptions } from '@/lib/demo/cohort-rows';

export const SECRET = Buffer.from('a per-export secret used only by these tests 0123456789', 'utf8');
export const TODAY = '2026-12-02';

export interface MadeExport {
  dir: string;
  zipPath: string;
  files: Record<string, Buffer>;
  summary: CohortExportSummary;
  cases: Record<string, string>[];
  reviews: Record<string, string>[];
}

export function exportInput(rows: SyntheticCohortOptions, change: Partial<CohortArchiveInput> = {}): CohortArchiveInput {
  return {
    rows: () => syntheticCohortRows(rows),
    total: rows.rows,
    variables: ['age_band', 'sex', 'postal_prefix', 'kind', 'lesion', 'lesion_mm', 'pai', 'tooth_group', 'arch', 'clinician', 'referrer'],
    k: 5,
    secret: SECRET,
    minObservationDays: 365,
    today: TODAY,
    cohort: { name: 'Molars after 2015', version: 3, filtersText: 'completed 2015 to 2024; all kinds' },
    ...change,
  };
}

export function parseCsv(text: string): Record<string, string>[] {
  const r = Papa.parse<Record<string, string>>(text, { header: true, skipEmptyLines: true });
  if (r.errors.length) throw new Error(`CSV errors: ${JSON.stringify(r.errors.slice(0, 3))}`);
  return r.data;
}

const madeDirs: string[] = [];

/** Removes the directories `makeExport` made (call it in the test file's afterAll). */
export function removeExports(): void {
  for (const dir of madeDirs.splice(0)) rmSync(dir, { recursive: true, force: true });
}

export async function makeExport(input: CohortArchiveInput): Promise<MadeExport> {
  const dir = mkdtempSync(path.join(tmpdir(), 'lamina-cohort-test-'));
  madeDirs.push(dir);
  const zipPath = path.join(dir, 'export.zip');
  const summary = await writeCohortArchive(input, createWriteStream(zipPath));
  const out = path.join(dir, 'x');
  execFileSync('unzip', ['-q', zipPath, '-d', out]);
  const files = Object.fromEntries(readdirSync(out).map((f) => [f, readFileSync(path.join(out, f))]));
  return {
    dir: out,
    zipPath,
    files,
    summary,
    cases: parseCsv(files['cases.csv']!.toString('utf8')),
    reviews: parseCsv(files['reviews.csv']!.toString('utf8')),
  };
}
