import { describe, expect, it } from 'vitest';
import fs from 'node:fs';
import path from 'node:path';

/**
 * The unit project runs without isolation (tests/vitest.config.ts): a worker reuses the modules it
 * loaded for its next file. A module mock or a change to the process's shared state would then
 * leak into later files, so such a file must be named *.isolated.test.ts (the `unit-isolated`
 * project). This test fails for any unit or reference file that does it under another name.
 */
const root = path.resolve(import.meta.dirname, '../..');
const SHARED_STATE = /\bvi\.(mock|doMock|unmock|stubEnv|stubGlobal|resetModules|useFakeTimers|spyOn)\b|process\.env\.[A-Za-z_]+\s*=[^=]/;

function testFiles(dir: string): string[] {
  return fs.readdirSync(dir, { withFileTypes: true }).flatMap((e) => {
    const p = path.join(dir, e.name);
    return e.isDirectory() ? testFiles(p) : e.name.endsWith('.test.ts') ? [p] : [];
  });
}

describe('unit files that change shared state are isolated', () => {
  const files = ['unit', 'reference'].flatMap((d) => testFiles(path.join(root, d)));

  it('finds the unit and reference files (the scan itself works)', () => {
    expect(files.length).toBeGreaterThan(50);
    expect(files.some((f) => f.endsWith('.isolated.test.ts'))).toBe(true);
  });

  it('no file outside *.isolated.test.ts mocks a module, stubs the environment or fakes timers', () => {
    const offenders = files
      .filter((f) => !f.endsWith('.isolated.test.ts') && f !== import.meta.filename)
      .filter((f) => SHARED_STATE.test(fs.readFileSync(f, 'utf8')))
      .map((f) => path.relative(root, f));
    expect(offenders).toEqual([]);
  });

  it('the pattern catches what it is meant to (and not a comparison)', () => {
    expect(SHARED_STATE.test("vi.mock('@/lib/stats')")).toBe(true);
    expect(SHARED_STATE.test("vi.stubEnv('TZ', 'UTC')")).toBe(true);
    expect(SHARED_STATE.test('process.env.APP_URL = "x"')).toBe(true);
    expect(SHARED_STATE.test('process.env.APP_URL === "x"')).toBe(false);
  });
});
