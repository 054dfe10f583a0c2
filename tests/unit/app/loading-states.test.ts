import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import path from 'node:path';

/**
 * A loading state names the page that is loading: a page under a folder with a loading.tsx shows
 * that folder's skeleton, so every page below /cases and /patients has a loading.tsx of its own
 * (before, "New case" said "Loading cases…"), and no two loading states say the same thing.
 */
const app = path.resolve(import.meta.dirname, '../../../app/(app)');

function walk(dir: string): string[] {
  return readdirSync(dir).flatMap((n) => {
    const full = path.join(dir, n);
    return statSync(full).isDirectory() ? walk(full) : [full];
  });
}

describe('loading states', () => {
  const files = walk(app);
  it('every page under a loading state has its own', () => {
    const withLoading = files.filter((f) => f.endsWith('loading.tsx')).map(path.dirname);
    const pages = files.filter((f) => f.endsWith('page.tsx')).map(path.dirname);
    const inherited = pages.filter((d) => !withLoading.includes(d) && withLoading.some((l) => d.startsWith(l + path.sep)));
    expect(inherited.map((d) => path.relative(app, d))).toEqual([]);
  });

  it('no two loading states say the same thing', () => {
    const labels = files.filter((f) => f.endsWith('loading.tsx')).map((f) => readFileSync(f, 'utf8').match(/label="([^"]+)"/)?.[1]);
    expect(labels.every(Boolean)).toBe(true);
    expect(new Set(labels).size).toBe(labels.length);
  });
});
