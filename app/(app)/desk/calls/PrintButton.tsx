'use client';

/** Opens the browser's print dialogue for the call list. */
export function PrintButton() {
  return (
    <button type="button" className="btn-primary print:hidden" onClick={() => window.print()}>
      Print
    </button>
  );
}
