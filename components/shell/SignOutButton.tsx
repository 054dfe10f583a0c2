'use client';
import { useState } from 'react';

/**
 * Signs out through next-auth's own endpoints (a CSRF token, then a POST to /api/auth/signout),
 * as next-auth/react's signOut() does, without shipping that client library with every page.
 */
async function signOut(callbackUrl: string) {
  const { csrfToken } = (await (await fetch('/api/auth/csrf')).json()) as { csrfToken: string };
  const res = await fetch('/api/auth/signout', {
    method: 'POST',
    headers: { 'Content-Type': 'application/x-www-form-urlencoded' },
    body: new URLSearchParams({ csrfToken, callbackUrl, json: 'true' }),
  });
  const { url } = (await res.json().catch(() => ({}))) as { url?: string };
  window.location.href = url ?? callbackUrl;
}

export function SignOutButton() {
  const [busy, setBusy] = useState(false);
  return (
    <button
      type="button"
      className="btn-secondary"
      disabled={busy}
      onClick={() => {
        setBusy(true);
        signOut('/sign-in').catch(() => {
          window.location.assign('/api/auth/signout'); // next-auth's own sign-out page
        });
      }}
    >
      Sign out
    </button>
  );
}
