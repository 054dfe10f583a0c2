'use client';
import { useEffect } from 'react';

export default function ErrorPage({ error, reset }: { error: Error & { digest?: string }; reset: () => void }) {
  useEffect(() => {
    console.error(error);
  }, [error]);
  return (
    <main id="main" className="mx-auto max-w-xl px-4 py-16 text-center">
      <h1 className="text-3xl">Something went wrong</h1>
      <p className="mt-3 text-ink-700">
        Lamina could not show this page. Nothing you saved was lost. Try again; if it keeps happening, tell your
        administrator{error.digest ? ` and quote reference ${error.digest}` : ''}.
      </p>
      <button type="button" className="btn-primary mt-6" onClick={reset}>
        Try again
      </button>
    </main>
  );
}
