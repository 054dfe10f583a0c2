'use client';
import { getCsrfToken } from 'next-auth/react';

/**
 * Chooses the practice this session acts in. The server accepts only a practice where the
 * person holds an active role, keeps the choice in the session token and audits it
 * (lib/auth/options.ts, jwt callback). True when the session now acts in that practice.
 */
export async function switchPractice(practiceId: string): Promise<boolean> {
  const csrfToken = await getCsrfToken();
  const res = await fetch('/api/auth/session', {
    method: 'POST',
    headers: { 'Content-Type': 'application/json' },
    body: JSON.stringify({ csrfToken, data: { practiceId } }),
  });
  if (!res.ok) return false;
  const body = (await res.json().catch(() => null)) as { practiceId?: string | null } | null;
  return body?.practiceId === practiceId;
}
