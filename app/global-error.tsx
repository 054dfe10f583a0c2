'use client';

export default function GlobalError({ reset }: { error: Error & { digest?: string }; reset: () => void }) {
  return (
    <html lang="en">
      <body style={{ fontFamily: 'system-ui, sans-serif', padding: '4rem 1rem', textAlign: 'center', background: '#f6f3ee', color: '#1d2225' }}>
        <h1>Lamina is not available</h1>
        <p>Something went wrong while loading the application. Nothing you saved was lost.</p>
        <button type="button" onClick={reset}>
          Try again
        </button>
      </body>
    </html>
  );
}
