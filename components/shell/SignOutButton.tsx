"use client";
import { useState } from "react";

/**
 * Signs out through next-auth's own endpoints (a CSRF token, then a POST to /api/auth/signout),
 * as next-auth/react's signOut() does, without shipping that client library with every page.
 */
async function signOut(callbackUrl: string) {
  const { csrfToken } = (await (await fetch("/api/auth/csrf")).json()) as {
    csrfToken: string;
  };
  const res = await fetch("/api/auth/signout", {
    method: "POST",
    headers: { "Content-Type": "application/x-www-form-urlencoded" },
    body: new URLSearchParams({ csrfToken, callbackUrl, json: "true" }),
  });
  const { url } = (await res.json().catch(() => ({}))) as { url?: string };
  window.location.href = url ?? callbackUrl;
}

export function SignOutButton() {
  const [busy, setBusy] = useState(false);
  const [failed, setFailed] = useState(false);
  return (
    <>
      {failed && (
        <span role="alert" className="text-sm text-state-alert">
          Not signed out: try again.
        </span>
      )}
      <button
        type="button"
        className="btn-secondary"
        disabled={busy}
        onClick={() => {
          setBusy(true);
          setFailed(false);
          signOut("/sign-in").catch(() => {
            setBusy(false);
            setFailed(true);
          });
        }}
      >
        Sign out
      </button>
    </>
  );
}
