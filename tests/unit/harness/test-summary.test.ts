import { describe, expect, test } from 'vitest';
import fs from 'node:fs';
import path from 'node:path';
import { execFileSync } from 'node:child_process';
import os from 'node:os';
import {
  countPlaywright,
  countVitest,
  detectKind,
  formatSummary,
  parseManifest,
  summarize,
  type ManifestEntry,
} from '../../../scripts/lib/test-summary.mjs';

// Fixtures are real reports of vitest 4 and Playwright 1.65 (trimmed): a file with one passed,
// one failed, one skipped and one todo test plus a file that fails to import; a spec file with
// one passed, one failed, one skipped test; and a Playwright run that found no tests.
const fixtures = path.join(import.meta.dirname, 'fixtures');
const fixture = (name: string) => fs.readFileSync(path.join(fixtures, name), 'utf8');
const json = (name: string): unknown => JSON.parse(fixture(name));

const vitestPassing = {
  numTotalTests: 2,
  numPassedTests: 2,
  numFailedTests: 0,
  success: true,
  testResults: [
    {
      name: '/repo/tests/unit/a.test.ts',
      status: 'passed',
      message: '',
      assertionResults: [
        { fullName: 'a one', title: 'one', status: 'passed' },
        { fullName: 'a two', title: 'two', status: 'passed' },
      ],
    },
  ],
};
const playwrightPassing = { stats: { expected: 3, unexpected: 0, flaky: 0, skipped: 0 }, suites: [], errors: [] };

/** summarize() over in-memory files. */
function run(entries: ManifestEntry[], files: Record<string, unknown>) {
  return summarize(entries, (file) => {
    if (!(file in files)) throw Object.assign(new Error(`ENOENT: ${file}`), { code: 'ENOENT' });
    const v = files[file];
    return typeof v === 'string' ? v : JSON.stringify(v);
  }, '/repo');
}

describe('reading reports', () => {
  test('tells vitest and Playwright reports apart', () => {
    expect(detectKind(json('vitest-mixed.json'))).toBe('vitest');
    expect(detectKind(json('playwright-mixed.json'))).toBe('playwright');
    expect(detectKind({ hello: 1 })).toBeNull();
    expect(detectKind(null)).toBeNull();
  });

  test('vitest: counts tests, and a file that failed to import as one failure', () => {
    const c = countVitest(json('vitest-mixed.json'), '/repo');
    expect(c).toMatchObject({ passed: 1, failed: 2, skipped: 2 });
    expect(c.failures).toEqual([
      't/a.test.ts > group fails',
      "t/b.test.ts: Cannot find module './does-not-exist' imported from /repo/t/b.test.ts",
    ]);
  });

  test('each failure carries the first line of its message, so a CI tail says why (a timeout, a status)', () => {
    expect(countVitest(json('vitest-mixed.json'), '/repo').reasons).toEqual(['AssertionError: expected 1 to be 2 // Object.is equality', '']);
    expect(countPlaywright(json('playwright-mixed.json')).reasons).toEqual(['Error: expect(locator).toHaveText(expected) failed']);
    const long = { ...vitestPassing, success: false, testResults: [{ ...vitestPassing.testResults[0]!, status: 'failed', assertionResults: [{ fullName: 'a slow', title: 'slow', status: 'failed', failureMessages: [`Error: ${'x'.repeat(500)}\n    at somewhere`] }] }] };
    const reason = countVitest(long).reasons![0]!;
    expect(reason.length).toBeLessThanOrEqual(301);
    expect(reason.startsWith('Error: xxx')).toBe(true);
    const text = formatSummary(run([{ kind: 'runner', name: 'vitest', exitCode: 1, file: 'v.json' }], { 'v.json': long }));
    expect(text.split('\n').slice(1, 3)).toEqual(['  ✗ tests/unit/a.test.ts > a slow', `      ${reason}`]);
  });

  test('vitest: success=false with no failed test is still a failure', () => {
    const c = countVitest({ ...vitestPassing, success: false });
    expect(c.failed).toBe(1);
    expect(c.notes[0]).toMatch(/without a failed test/);
  });

  test('Playwright: expected/unexpected/skipped, with failed test names', () => {
    const c = countPlaywright(json('playwright-mixed.json'));
    expect(c).toMatchObject({ passed: 1, failed: 1, skipped: 1 });
    expect(c.failures).toEqual(['a.spec.ts › fails']);
  });

  test('Playwright: "No tests found" (an error outside any test) is a failure', () => {
    const c = countPlaywright(json('playwright-no-tests.json'));
    expect(c).toMatchObject({ passed: 0, failed: 1 });
    expect(c.failures[0]).toContain('No tests found');
  });
});

describe('the manifest', () => {
  test('parses expect, runner and step lines; an empty exit code is unknown', () => {
    expect(parseManifest('expect\tvitest\nrunner\tvitest\t0\t/x/v.json\nstep\tbuild\t2\nrunner\tpw\t\t/x/p.json\n\n')).toEqual([
      { kind: 'expect', name: 'vitest' },
      { kind: 'runner', name: 'vitest', exitCode: 0, file: '/x/v.json' },
      { kind: 'step', name: 'build', exitCode: 2 },
      { kind: 'runner', name: 'pw', exitCode: null, file: '/x/p.json' },
    ]);
  });

  test('rejects a line it does not know', () => {
    expect(() => parseManifest('bogus\tx')).toThrow(/unknown manifest line/);
  });
});

describe('summing every runner', () => {
  test('all green: sums the runners and ends with the closing line', () => {
    const s = run(
      [
        { kind: 'expect', name: 'vitest' },
        { kind: 'expect', name: 'playwright' },
        { kind: 'step', name: 'migrate', exitCode: 0 },
        { kind: 'runner', name: 'vitest', exitCode: 0, file: 'v.json' },
        { kind: 'runner', name: 'playwright', exitCode: 0, file: 'p.json' },
      ],
      { 'v.json': vitestPassing, 'p.json': playwrightPassing },
    );
    expect(s).toMatchObject({ passed: 5, failed: 0, problems: [] });
    const text = formatSummary(s);
    expect(text.split('\n').at(-1)).toBe('tests: 5 passed, 0 failed');
    expect(text).toContain('vitest: 2 passed, 0 failed');
    expect(text).toContain('playwright: 3 passed, 0 failed');
  });

  test('mixed real reports add up', () => {
    const s = run(
      [
        { kind: 'runner', name: 'vitest', exitCode: 1, file: 'v.json' },
        { kind: 'runner', name: 'playwright', exitCode: 1, file: 'p.json' },
      ],
      { 'v.json': fixture('vitest-mixed.json'), 'p.json': fixture('playwright-mixed.json') },
    );
    expect(s).toMatchObject({ passed: 2, failed: 3 });
    expect(formatSummary(s).split('\n').at(-1)).toBe('tests: 2 passed, 3 failed');
  });

  test('a runner that wrote no JSON counts as a failure, clearly reported', () => {
    const s = run([{ kind: 'runner', name: 'playwright', exitCode: 137, file: 'missing.json' }], {});
    expect(s.failed).toBe(1);
    expect(formatSummary(s)).toMatch(/playwright: 0 passed, 1 failed\n {2}! wrote no JSON report \(exit 137\)/);
  });

  test('an unreadable report counts as a failure', () => {
    const s = run([{ kind: 'runner', name: 'vitest', exitCode: 1, file: 'v.json' }], { 'v.json': '{"numTotalTests": 3,' });
    expect(s.failed).toBe(1);
    expect(s.runners[0]!.notes[0]).toMatch(/unreadable/);
  });

  test('a non-zero exit with a clean report is a failure', () => {
    const s = run([{ kind: 'runner', name: 'vitest', exitCode: 1, file: 'v.json' }], { 'v.json': vitestPassing });
    expect(s).toMatchObject({ passed: 2, failed: 1 });
    expect(s.runners[0]!.notes[0]).toMatch(/exited with code 1/);
  });

  test('an expected runner that never ran, and a failed set-up step, are failures', () => {
    const s = run(
      [
        { kind: 'expect', name: 'vitest' },
        { kind: 'expect', name: 'playwright' },
        { kind: 'runner', name: 'vitest', exitCode: 0, file: 'v.json' },
        { kind: 'step', name: 'next build', exitCode: 1 },
      ],
      { 'v.json': vitestPassing },
    );
    expect(s).toMatchObject({ passed: 2, failed: 2 });
    const text = formatSummary(s);
    expect(text).toContain('playwright: 0 passed, 1 failed\n  ! did not run, or did not finish');
    expect(text).toContain('! set-up step "next build" failed (exit 1)');
    expect(text.split('\n').at(-1)).toBe('tests: 2 passed, 2 failed');
  });

  test('nothing ran at all is a failure, not a pass', () => {
    const s = run([], {});
    expect(s).toMatchObject({ passed: 0, failed: 1 });
    expect(formatSummary(s).split('\n').at(-1)).toBe('tests: 0 passed, 1 failed');
  });

  test('long failure lists are cut short', () => {
    const many = {
      ...vitestPassing,
      success: false,
      testResults: [
        {
          name: '/repo/x.test.ts',
          status: 'failed',
          message: '',
          assertionResults: Array.from({ length: 30 }, (_, i) => ({ fullName: `t${i}`, title: `t${i}`, status: 'failed' })),
        },
      ],
    };
    const text = formatSummary(run([{ kind: 'runner', name: 'vitest', exitCode: 1, file: 'v.json' }], { 'v.json': many }));
    expect(text).toContain('… and 5 more');
    expect(text.split('\n').at(-1)).toBe('tests: 0 passed, 30 failed');
  });
});

describe('the command line', () => {
  const cli = path.resolve(import.meta.dirname, '../../../scripts/summarize-tests.mjs');

  function cliRun(manifest: string | null) {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'lamina-summary-'));
    try {
      fs.writeFileSync(path.join(dir, 'v.json'), JSON.stringify(vitestPassing));
      const file = path.join(dir, 'manifest.tsv');
      if (manifest !== null) fs.writeFileSync(file, manifest.replaceAll('DIR', dir));
      try {
        return { code: 0, out: execFileSync('node', [cli, file], { encoding: 'utf8' }) };
      } catch (e) {
        const err = e as { status: number; stdout: string };
        return { code: err.status, out: err.stdout };
      }
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  }

  test('exit 0 and the closing line when everything passed', () => {
    const r = cliRun('expect\tvitest\nrunner\tvitest\t0\tDIR/v.json\n');
    expect(r.code).toBe(0);
    expect(r.out.trimEnd().split('\n').at(-1)).toBe('tests: 2 passed, 0 failed');
  });

  test('exit 1 when a runner crashed', () => {
    const r = cliRun('expect\tvitest\nexpect\tplaywright\nrunner\tvitest\t0\tDIR/v.json\nrunner\tplaywright\t1\tDIR/none.json\n');
    expect(r.code).toBe(1);
    expect(r.out.trimEnd().split('\n').at(-1)).toBe('tests: 2 passed, 1 failed');
  });

  test('a missing manifest means nothing ran: exit 1', () => {
    const r = cliRun(null);
    expect(r.code).toBe(1);
    expect(r.out.trimEnd().split('\n').at(-1)).toBe('tests: 0 passed, 1 failed');
  });
});
