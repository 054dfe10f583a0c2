/**
 * The research export's archive (lib/cohorts/archive.ts writeCohortArchive), unzipped with
 * Debian's `unzip`: the files, that no identifier of the fixture reaches any byte of it, k checked
 * on cases.csv itself (Sweeney 2002), the figures of the summary and README against the files,
 * progress and cancellation.
 */
import { createHmac } from 'node:crypto';
import { readdirSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { Writable } from 'node:stream';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { COHORT_FILES, COHORT_VARIABLE_KEYS, writeCohortArchive, type CohortExportProgress } from '@/lib/cohorts';
import { exportColumns } from '@/lib/cohorts/catalogue';
import { ageBandCodes } from '@/lib/cohorts/deidentify';
import { syntheticCohortRows, type PlantedIdentifiers } from '@/lib/demo/cohort-rows';
import { exportInput, makeExport, removeExports, SECRET, type MadeExport } from '../../support/cohort-archive';

const ROWS = { rows: 1500, seed: 7, withIdentifiers: true };
let made: MadeExport;
afterAll(removeExports);
beforeAll(async () => {
  made = await makeExport(exportInput(ROWS));
}, 120_000);

/** Every identifier the fixture holds: planted ones, ids, dates of birth, completion and review dates, postal codes. */
async function identifiers(rows: typeof ROWS): Promise<Set<string>> {
  const out = new Set<string>();
  for await (const row of syntheticCohortRows(rows)) {
    const p = (row as { planted?: PlantedIdentifiers }).planted!;
    for (const v of Object.values(p)) out.add(v);
    out.add(p.phone.replace(/\s/g, ''));
    for (const id of [row.case.id, row.case.patientId, row.case.operatorId, row.case.referrerId, row.case.previousCaseId, row.practiceId]) {
      if (!id) continue;
      out.add(id);
      out.add(id.slice(0, 8)); // Lamina's short reference
    }
    out.add(row.patient.dateOfBirth);
    out.add(row.case.completionDate);
    for (const r of row.case.reviews) out.add(r.reviewDate);
    if (row.patient.postalCode) out.add(row.patient.postalCode);
  }
  return out;
}

describe('the files', () => {
  it('are the seven of the contract, and the summary lists them', () => {
    expect(Object.keys(made.files).sort()).toEqual([...COHORT_FILES].sort());
    expect(made.summary.files).toEqual([...COHORT_FILES]);
  });
  it('cases.csv has the catalogue’s columns, CRLF line ends, and one row per released case', () => {
    const text = made.files['cases.csv']!.toString('utf8');
    const header = text.split('\r\n')[0]!.split(',');
    expect(header).toEqual(exportColumns(exportInput(ROWS).variables).map((v) => v.key));
    expect(text.replace(/\r\n/g, '')).not.toContain('\n');
    expect(made.cases).toHaveLength(made.summary.cases);
    expect(made.summary.cases + made.summary.suppressed).toBe(ROWS.rows);
    expect(new Set(made.cases.map((c) => c.case_id)).size).toBe(made.cases.length);
    expect(new Set(made.cases.map((c) => c.patient_id)).size).toBe(made.summary.patients);
    expect(made.cases.filter((c) => c.generalised === '1')).toHaveLength(made.summary.generalised);
  });
  it('reviews.csv holds the reviews of released cases only, in days since completion', () => {
    expect(made.reviews).toHaveLength(made.summary.reviews);
    const ids = new Set(made.cases.map((c) => c.case_id));
    for (const r of made.reviews) {
      expect(ids.has(r.case_id)).toBe(true);
      expect(Number(r.days)).toBeGreaterThanOrEqual(0);
      expect(['healed', 'healing', 'uncertain', 'disease', 'tooth-extracted', 'retreated', 'apical-surgery']).toContain(r.outcome);
    }
  });
  it('the dictionary (csv and json) names every column of cases.csv and reviews.csv', () => {
    const json = JSON.parse(made.files['dictionary.json']!.toString('utf8')) as { variables: { variable: string; codes: Record<string, string> | null }[]; reviews: { variable: string }[] };
    expect(json.variables.map((v) => v.variable)).toEqual(Object.keys(made.cases[0]!));
    expect(json.reviews.map((v) => v.variable)).toEqual(Object.keys(made.reviews[0]!));
    const csv = made.files['dictionary.csv']!.toString('utf8');
    for (const v of json.variables) expect(csv).toContain(`\r\n${v.variable},`);
    // the export's clinician codes are named in the dictionary
    const clinicians = new Set(made.cases.map((c) => c.clinician));
    for (const c of clinicians) expect(json.variables.find((v) => v.variable === 'clinician')!.codes).toHaveProperty(c);
  });
  it('the README gives the figures of this export and the sources of its rules', () => {
    const readme = made.files['README.md']!.toString('utf8');
    const s = made.summary;
    expect(readme).toContain(`| Cases | ${s.cases} |`);
    expect(readme).toContain(`| Patients | ${s.patients} |`);
    expect(readme).toContain(`| Reviews | ${s.reviews} |`);
    expect(readme).toContain(`| Rows generalised | ${s.generalised} |`);
    expect(readme).toContain(`| Rows suppressed | ${s.suppressed} |`);
    expect(readme).toContain(`| Smallest l (distinct outcomes in a class) | ${s.minL} |`);
    for (const source of ['45 CFR 164.514(b)(2)', 'Sweeney 2002', 'Machanavajjhala', 'Kaplan & Meier 1958', 'Lin & Wei 1989', 'Turnbull 1976', 'STROBE']) expect(readme).toContain(source);
    expect(readme).toContain('Molars after 2015 (version 3)');
    expect(readme).toMatch(/not a diagnosis/);
  });
});

describe('de-identification', () => {
  it('no identifier of the fixture appears in any byte of the zip or of any file in it (k = 1: every row written)', { timeout: 120_000 }, async () => {
    const leakRows = { rows: 400, seed: 11, withIdentifiers: true };
    const all = await makeExport(exportInput(leakRows, { k: 1, variables: COHORT_VARIABLE_KEYS }));
    expect(all.summary.cases).toBe(400);
    const ids = await identifiers(leakRows);
    expect(ids.size).toBeGreaterThan(3000);
    const haystacks: [string, string[]][] = [
      ['export.zip', [readFileSync(all.zipPath).toString('latin1'), readFileSync(all.zipPath).toString('utf16le')]],
      ...Object.entries(all.files).map(([name, bytes]) => [name, [bytes.toString('utf8')]] as [string, string[]]),
    ];
    const found: string[] = [];
    for (const [name, texts] of haystacks) {
      for (const id of ids) {
        // short or all-digit identifiers (postal codes, short references) count only as a whole token:
        // five digits also occur inside a hexadecimal pseudonym or a longer number by chance
        const whole = id.length < 9 || /^\d+$/.test(id);
        const hit = whole ? texts.some((t) => new RegExp(`(?<![0-9A-Za-z])${id.replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}(?![0-9A-Za-z])`).test(t)) : texts.some((t) => t.includes(id));
        if (hit) found.push(`${name}: ${id}`);
      }
    }
    expect(found).toEqual([]);
  });
  it('the secret is not written, in any form', () => {
    const forms = [SECRET.toString('utf8'), SECRET.toString('hex'), SECRET.toString('base64')];
    for (const [, bytes] of [['zip', readFileSync(made.zipPath)] as const, ...Object.entries(made.files)]) {
      for (const f of forms) expect(bytes.toString('latin1').includes(f)).toBe(false);
    }
  });
  it('pseudonymous ids are HMAC-SHA256 of the ids under the secret, never the ids', async () => {
    const expected = new Set<string>();
    const expectedCases = new Set<string>();
    const hmac = (text: string) => createHmac('sha256', SECRET).update(text).digest('hex').slice(0, 16);
    for await (const row of syntheticCohortRows(ROWS)) {
      expected.add(`pt-${hmac(`patient:${row.case.patientId}`)}`);
      expectedCases.add(`cs-${hmac(`case:${row.case.id}`)}`);
    }
    for (const c of made.cases) {
      expect(expected.has(c.patient_id!)).toBe(true);
      expect(expectedCases.has(c.case_id!)).toBe(true);
    }
  });
  it('ages are bands with 90+, years are years or periods, codes replace clinicians and referrers', () => {
    const bands = new Set([...ageBandCodes(5), ...ageBandCodes(10)]);
    for (const c of made.cases) {
      expect(bands.has(c.age_band!)).toBe(true);
      expect(c.completion_year).toMatch(c.generalised === '1' ? /^\d{4}-\d{4}$/ : /^\d{4}$/);
      expect(c.clinician).toMatch(/^C\d{2}$/);
      expect(c.referrer).toMatch(/^(R\d{2}|none)$/);
      expect(c.practice).toMatch(/^P\d{2}$/);
      expect(c.postal_prefix ?? '').toMatch(/^(\d{3})?$/);
      if (c.generalised === '1') expect(c.postal_prefix ?? '').toBe('');
    }
    expect(made.cases.some((c) => c.age_band === '90+')).toBe(true);
  });
  it('k-anonymity holds on cases.csv itself: every released combination of quasi-identifiers occurs at least k times', () => {
    const k = exportInput(ROWS).k;
    const counts = new Map<string, number>();
    for (const c of made.cases) {
      const key = [c.practice, c.completion_year, c.age_band, c.sex, c.tooth_group, c.postal_prefix].join('|');
      counts.set(key, (counts.get(key) ?? 0) + 1);
    }
    expect(Math.min(...counts.values())).toBeGreaterThanOrEqual(k);
    // and the l reported is the smallest number of distinct latest outcomes per class
    const outcomes = new Map<string, Set<string>>();
    for (const c of made.cases) {
      const key = [c.practice, c.completion_year, c.age_band, c.sex, c.tooth_group, c.postal_prefix].join('|');
      outcomes.set(key, (outcomes.get(key) ?? new Set()).add(c.outcome_latest || 'not_known'));
    }
    expect(made.summary.minL).toBe(Math.min(...[...outcomes.values()].map((s) => s.size)));
    expect(made.summary.generalised).toBeGreaterThan(0);
    expect(made.summary.suppressed).toBeGreaterThan(0);
  });
  it('a bigger k still holds', { timeout: 120_000 }, async () => {
    const e = await makeExport(exportInput({ ...ROWS, rows: 400 }, { k: 10, variables: ['age_band', 'sex', 'tooth_group'] }));
    const counts = new Map<string, number>();
    for (const c of e.cases) {
      const key = [c.practice, c.completion_year, c.age_band, c.sex, c.tooth_group].join('|');
      counts.set(key, (counts.get(key) ?? 0) + 1);
    }
    if (counts.size) expect(Math.min(...counts.values())).toBeGreaterThanOrEqual(10);
    expect(e.summary.cases + e.summary.suppressed).toBe(400);
  });
});

describe('progress and cancellation', () => {
  const sink = () =>
    new Writable({
      write(_chunk, _enc, cb) {
        cb();
      },
    });
  it('reports progress over both passes, rising, ending at total', { timeout: 120_000 }, async () => {
    const seen: CohortExportProgress[] = [];
    await writeCohortArchive(exportInput({ rows: 1200, seed: 3 }, { onProgress: (p) => void seen.push(p) }), sink());
    expect(seen.map((p) => p.done)).toEqual([1000, 1200, 2000, 2400]);
    expect(seen.at(-1)).toEqual({ done: 2400, total: 2400 });
    const exact: number[] = [];
    await writeCohortArchive(exportInput({ rows: 1000, seed: 3 }, { onProgress: (p) => void exact.push(p.done) }), sink());
    expect(exact, 'no repeated report when a pass ends on a round number').toEqual([1000, 2000]);
  });
  it('stops when the signal aborts (in either pass), rejects with its reason and leaves no temporary file', { timeout: 120_000 }, async () => {
    const before = readdirSync(tmpdir()).filter((f) => f.startsWith('lamina-cohort-') && !f.startsWith('lamina-cohort-test-')).length;
    for (const at of [500, 1900]) {
      const ac = new AbortController();
      const seen: number[] = [];
      const p = writeCohortArchive(
        exportInput(
          { rows: 1200, seed: 3 },
          {
            signal: ac.signal,
            onProgress: (x) => {
              seen.push(x.done);
              if (x.done >= at) ac.abort(new Error('cancelled by the researcher'));
            },
          },
        ),
        sink(),
      );
      await expect(p).rejects.toThrow('cancelled by the researcher');
      expect(Math.max(...seen)).toBeLessThanOrEqual(Math.max(at, 1200) + 1000);
    }
    const after = readdirSync(tmpdir()).filter((f) => f.startsWith('lamina-cohort-') && !f.startsWith('lamina-cohort-test-')).length;
    expect(after).toBe(before);
  });
  it('rejects, and does not hang, when the output fails', { timeout: 120_000 }, async () => {
    let writes = 0;
    const failing = new Writable({
      write(_chunk, _enc, cb) {
        writes += 1;
        cb(writes > 3 ? new Error('disk full') : null);
      },
    });
    await expect(writeCohortArchive(exportInput({ rows: 3000, seed: 3 }), failing)).rejects.toThrow('disk full');
  });
  it('a cancellation while the output is full (never drained) ends the export', { timeout: 120_000 }, async () => {
    const ac = new AbortController();
    const stalled = new Writable({
      highWaterMark: 1024,
      write() {
        // never calls back: the output is stuck; cancel once the writer has had to wait
        setImmediate(() => ac.abort(new Error('cancelled while the output was full')));
      },
    });
    await expect(writeCohortArchive(exportInput({ rows: 3000, seed: 3 }, { signal: ac.signal }), stalled)).rejects.toThrow('cancelled while the output was full');
  });
  it('refuses an unknown variable and a short secret before writing', async () => {
    await expect(writeCohortArchive(exportInput({ rows: 5 }, { variables: ['surname'] }), sink())).rejects.toThrow(/surname/);
    await expect(writeCohortArchive(exportInput({ rows: 5 }, { secret: Buffer.from('short') }), sink())).rejects.toThrow(/16 bytes/);
  });
});

