/**
 * Benchmark of the research export's archive writer (issue 14, lib/cohorts writeCohortArchive):
 * invented cohorts (lib/demo/cohort-rows.ts, made again row by row on each pass, as a database
 * cursor would give them) of 10,000 and 100,000 cases written to a zip file on disk, each size in
 * its own process so the peak resident memory (process.resourceUsage().maxRSS) is that export's.
 * Memory should be flat: the peak at 100,000 within 20% of the peak at 10,000 (issue 14).
 * Also the time of one pass of the generator alone (part of the export's time here).
 *
 *   npm run bench -- cohort-archive
 *   npx tsx scripts/bench/cohort-archive.ts [sizes, e.g. 10000,100000]
 *
 * Needs no services. The figures are for this machine under its load at the time.
 */
import { spawnSync } from 'node:child_process';
import { createWriteStream, mkdtempSync, rmSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { performance } from 'node:perf_hooks';
import { fileURLToPath } from 'node:url';

const CHILD = '--child';

async function child(n: number): Promise<void> {
  const { writeCohortArchive } = await import('../../lib/cohorts');
  const { syntheticCohortRows } = await import('../../lib/demo/cohort-rows');
  const opts = { rows: n, seed: 14, withIdentifiers: false };
  let t0 = performance.now();
  for await (const row of syntheticCohortRows(opts)) void row;
  const generate = performance.now() - t0;
  const dir = mkdtempSync(path.join(tmpdir(), 'lamina-bench-cohort-'));
  const zip = path.join(dir, 'export.zip');
  let progressCalls = 0;
  t0 = performance.now();
  const summary = await writeCohortArchive(
    {
      rows: () => syntheticCohortRows(opts),
      total: n,
      variables: ['age_band', 'sex', 'kind', 'lesion', 'lesion_mm', 'pai', 'tooth_group', 'arch', 'fill', 'clinician', 'referrer'],
      k: 5,
      secret: Buffer.alloc(32, 7),
      minObservationDays: 365,
      today: '2026-12-02',
      cohort: { name: 'Bench', version: 1, filtersText: 'all invented cases' },
      onProgress: () => void (progressCalls += 1),
    },
    createWriteStream(zip),
  );
  const write = performance.now() - t0;
  const size = statSync(zip).size;
  rmSync(dir, { recursive: true, force: true });
  console.log(
    JSON.stringify({ n, writeMs: Math.round(write), generateMs: Math.round(generate), peakRssMb: Math.round(process.resourceUsage().maxRSS / 1024), zipMb: +(size / 1e6).toFixed(2), progressCalls, summary: { ...summary, files: undefined } }),
  );
}

async function main(): Promise<void> {
  if (process.argv[2] === CHILD) return child(Number(process.argv[3]));
  const sizes = (process.argv[2] ?? '10000,100000').split(',').map(Number);
  const tsx = path.resolve(import.meta.dirname, '../../node_modules/tsx/dist/cli.mjs');
  const results: { n: number; writeMs: number; generateMs: number; peakRssMb: number; zipMb: number }[] = [];
  for (const n of sizes) {
    const r = spawnSync(process.execPath, [tsx, fileURLToPath(import.meta.url), CHILD, String(n)], { encoding: 'utf8', env: process.env });
    if (r.status !== 0) throw new Error(`cohort-archive bench at ${n} failed: ${r.stderr}`);
    const line = r.stdout.trim().split('\n').at(-1)!;
    const res = JSON.parse(line) as (typeof results)[number] & { summary: unknown };
    results.push(res);
    console.log(`${n.toLocaleString('en')} cases: export ${(res.writeMs / 1000).toFixed(1)} s (of which making the rows, two passes ≈ ${((2 * res.generateMs) / 1000).toFixed(1)} s), peak RSS ${res.peakRssMb} MB, zip ${res.zipMb} MB`);
    console.log(`  ${JSON.stringify(res.summary)}`);
  }
  if (results.length >= 2) {
    const lo = results[0]!;
    const hi = results.at(-1)!;
    const ratio = hi.peakRssMb / lo.peakRssMb;
    console.log(`peak RSS ${hi.n.toLocaleString('en')} / ${lo.n.toLocaleString('en')}: ${ratio.toFixed(2)} (${ratio <= 1.2 ? 'flat: within 20%' : 'NOT within 20%'})`);
    if (ratio > 1.2) process.exitCode = 1;
  }
}

await main();
