import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import path from 'node:path';
import { ACTION_GROUPS, actionWords, detailWords, isKnownAction, shortRef } from '@/lib/audit/words';

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const full = path.join(dir, name);
    if (statSync(full).isDirectory()) return sourceFiles(full);
    return /\.tsx?$/.test(name) ? [full] : [];
  });
}

describe('audit actions in plain words', () => {
  it('every action code written by lib/, jobs/ and app/ has words of its own', () => {
    const root = path.resolve(import.meta.dirname, '../../..');
    const codes = new Set<string>();
    for (const file of ['lib', 'jobs', 'app'].flatMap((d) => sourceFiles(path.join(root, d)))) {
      const text = readFileSync(file, 'utf8');
      for (const m of text.matchAll(/action: '([a-z_]+\.[a-z_.]+)'/g)) codes.add(m[1]!);
      // `patient.${archiveChange}` in lib/services/patients.ts
      for (const m of text.matchAll(/action: `([a-z_]+)\.\$\{/g)) codes.add(`${m[1]}.archived`).add(`${m[1]}.restored`);
    }
    expect(codes.size).toBeGreaterThan(30);
    expect([...codes].filter((c) => !isKnownAction(c)), 'action codes without words in lib/audit/words.ts').toEqual([]);
  });

  it('every group prefix matches its own codes only', () => {
    for (const g of ACTION_GROUPS) for (const code of Object.keys(g.actions)) expect(code.startsWith(g.prefix)).toBe(true);
  });

  it('names known codes, and reads an unknown one as words', () => {
    expect(actionWords('case.read')).toBe('Opened a case');
    expect(actionWords('review.archived_by_robot')).toBe('Review archived by robot');
  });

  it('summarises detail without lists of ids', () => {
    const ids = Array.from({ length: 12 }, (_, i) => `0000000${i.toString(16)}-0000-4000-8000-000000000000`.slice(-36));
    expect(detailWords({ queue: 'due_soon', page: 1, visitIds: ids })).toBe('queue: due_soon · page: 1 · 12 visits');
    expect(detailWords({ role: 'admin' })).toBe('role: admin');
    expect(detailWords({ fields: ['phone', 'email'] })).toBe('fields: phone, email');
    expect(detailWords({ patientId: '7a714c12-617d-4f00-99b0-7bf93b434ca0', completed: true })).toBe('patient: 7a714c12 · completed: yes');
    expect(detailWords(null)).toBe('');
    expect(shortRef('7a714c12-617d-4f00-99b0-7bf93b434ca0')).toBe('7a714c12');
  });
});
