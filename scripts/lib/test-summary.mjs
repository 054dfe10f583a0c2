// Sums the results of every test runner of `npm test` into one closing line,
// `tests: N passed, N failed`. Pure functions; scripts/summarize-tests.mjs is the command line.
//
// scripts/test.sh records what happened in a manifest, one tab-separated line per event:
//   expect  NAME                      a runner that must report (missing = failure)
//   runner  NAME  EXITCODE  JSONFILE  a runner finished (EXITCODE empty if unknown)
//   step    NAME  EXITCODE            a set-up step (migrate, build, ...) finished
//
// Each runner's JSON report (vitest's `json` reporter, Playwright's `json` reporter) is counted.
// Anything that stops a result from being trusted counts as one failure, with a note saying
// why: a runner that wrote no report or an unreadable one, a runner that exited non-zero while
// its report shows no failed test, an expected runner that never ran, a failed set-up step,
// and a run in which no test ran at all.

/** @param {string} text */
export function parseManifest(text) {
  const entries = [];
  for (const raw of text.split('\n')) {
    const line = raw.replace(/\r$/, '');
    if (!line.trim()) continue;
    const [kind, name = '', exit = '', file = ''] = line.split('\t');
    const exitCode = exit === '' ? null : Number(exit);
    if (kind === 'expect') entries.push({ kind, name });
    else if (kind === 'runner') entries.push({ kind, name, exitCode: Number.isInteger(exitCode) ? exitCode : null, file });
    else if (kind === 'step') entries.push({ kind, name, exitCode: Number.isInteger(exitCode) ? exitCode : null });
    else throw new Error(`unknown manifest line: ${line}`);
  }
  return entries;
}

/** Which runner wrote this report: 'vitest', 'playwright' or null. */
export function detectKind(report) {
  if (!report || typeof report !== 'object') return null;
  if (typeof report.numTotalTests === 'number' && Array.isArray(report.testResults)) return 'vitest';
  if (report.stats && typeof report.stats.expected === 'number' && Array.isArray(report.suites)) return 'playwright';
  return null;
}

const MAX_NAMES = 25;
const MAX_WHY = 300;
const stripAnsi = (s) => String(s).replace(/\u001b\[[0-9;]*m/g, '');
const firstLine = (s) => stripAnsi(s).split('\n').find((l) => l.trim()) ?? '';
/** A failure's first message line, cut short: what CI's printed tail can tell of it. */
const why = (s) => {
  const line = firstLine(s ?? '').trim();
  return line.length > MAX_WHY ? `${line.slice(0, MAX_WHY)}…` : line;
};

/** Counts of vitest's JSON report (jest-compatible shape). */
export function countVitest(report, cwd = '') {
  const rel = (f) => (cwd && String(f).startsWith(cwd + '/') ? String(f).slice(cwd.length + 1) : String(f));
  const out = { passed: 0, failed: 0, skipped: 0, failures: [], reasons: [], notes: [] };
  for (const file of report.testResults ?? []) {
    let failedHere = 0;
    for (const a of file.assertionResults ?? []) {
      if (a.status === 'passed') out.passed += 1;
      else if (a.status === 'failed') {
        out.failed += 1;
        failedHere += 1;
        out.failures.push(`${rel(file.name)} > ${a.fullName ?? a.title}`);
        out.reasons.push(why(a.failureMessages?.[0]));
      } else out.skipped += 1;
    }
    // A file that failed as a whole (import error, failing hook) has no failed test of its own.
    if (file.status === 'failed' && failedHere === 0) {
      out.failed += 1;
      out.failures.push(`${rel(file.name)}: ${firstLine(file.message) || 'the file failed to run'}`);
      out.reasons.push('');
    }
  }
  if (report.success === false && out.failed === 0) {
    out.failed += 1;
    out.notes.push('vitest reported failure without a failed test (an unhandled error?)');
  }
  return out;
}

/** Counts of Playwright's JSON report. Retries are off, so `flaky` should not happen; it counts as passed. */
export function countPlaywright(report) {
  const s = report.stats ?? {};
  const out = {
    passed: (s.expected ?? 0) + (s.flaky ?? 0),
    failed: s.unexpected ?? 0,
    skipped: s.skipped ?? 0,
    failures: [],
    reasons: [],
    notes: [],
  };
  const walk = (suite, file) => {
    for (const spec of suite.specs ?? []) {
      for (const t of spec.tests ?? []) {
        if (t.status !== 'unexpected') continue;
        out.failures.push(`${spec.file ?? file} › ${spec.title}${t.projectName ? ` [${t.projectName}]` : ''}`);
        const error = (t.results ?? []).map((r) => r.error ?? r.errors?.[0]).find(Boolean);
        out.reasons.push(why(error?.message ?? error?.stack));
      }
    }
    for (const child of suite.suites ?? []) walk(child, suite.file ?? file);
  };
  for (const suite of report.suites ?? []) walk(suite, suite.file);
  // Errors outside any test: config errors, "No tests found", a failing global set-up.
  for (const e of report.errors ?? []) {
    out.failed += 1;
    out.failures.push(`(outside any test) ${firstLine(e.message ?? e.stack ?? e)}`);
    out.reasons.push('');
  }
  return out;
}

/**
 * @param {ReturnType<typeof parseManifest>} entries
 * @param {(file: string) => string} readFile  throws if the file is missing
 */
export function summarize(entries, readFile, cwd = '') {
  const runners = [];
  const problems = [];
  const seen = new Set();
  for (const e of entries) {
    if (e.kind === 'step') {
      if (e.exitCode !== 0) problems.push(`set-up step "${e.name}" failed${e.exitCode === null ? '' : ` (exit ${e.exitCode})`}`);
      continue;
    }
    if (e.kind !== 'runner') continue;
    seen.add(e.name);
    const r = { name: e.name, exitCode: e.exitCode, passed: 0, failed: 0, skipped: 0, failures: [], notes: [] };
    runners.push(r);
    let report;
    try {
      report = JSON.parse(readFile(e.file));
    } catch (err) {
      r.failed = 1;
      const missing = err && err.code === 'ENOENT';
      r.notes.push(
        `${missing ? 'wrote no JSON report' : 'wrote an unreadable JSON report'} (exit ${e.exitCode ?? 'unknown'}): the runner crashed or never started`,
      );
      continue;
    }
    const kind = detectKind(report);
    if (!kind) {
      r.failed = 1;
      r.notes.push('its JSON report is neither a vitest nor a Playwright report');
      continue;
    }
    Object.assign(r, kind === 'vitest' ? countVitest(report, cwd) : countPlaywright(report), { name: e.name, exitCode: e.exitCode });
    if (e.exitCode !== 0 && r.failed === 0) {
      r.failed = 1;
      r.notes.push(`exited with ${e.exitCode === null ? 'an unknown status' : `code ${e.exitCode}`} although its report shows no failed test`);
    }
  }
  for (const e of entries) {
    if (e.kind === 'expect' && !seen.has(e.name)) {
      seen.add(e.name);
      runners.push({ name: e.name, exitCode: null, passed: 0, failed: 1, skipped: 0, failures: [], notes: ['did not run, or did not finish'] });
    }
  }
  let passed = runners.reduce((n, r) => n + r.passed, 0);
  let failed = runners.reduce((n, r) => n + r.failed, 0) + problems.length;
  if (passed === 0 && failed === 0) {
    problems.push('no test ran at all');
    failed = 1;
  }
  return { runners, problems, passed, failed };
}

/** The printed summary; its last line is exactly `tests: N passed, N failed`. */
export function formatSummary(summary) {
  const lines = [];
  for (const r of summary.runners) {
    const skipped = r.skipped ? `, ${r.skipped} skipped` : '';
    lines.push(`${r.name}: ${r.passed} passed, ${r.failed} failed${skipped}`);
    for (const n of r.notes) lines.push(`  ! ${n}`);
    for (const [i, f] of r.failures.slice(0, MAX_NAMES).entries()) {
      lines.push(`  ✗ ${f}`);
      if (r.reasons?.[i]) lines.push(`      ${r.reasons[i]}`);
    }
    if (r.failures.length > MAX_NAMES) lines.push(`  … and ${r.failures.length - MAX_NAMES} more`);
  }
  for (const p of summary.problems) lines.push(`! ${p}`);
  lines.push(`tests: ${summary.passed} passed, ${summary.failed} failed`);
  return lines.join('\n');
}
