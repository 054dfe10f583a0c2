/** A small circled "i", drawn (not a font glyph) so it renders with every font. */
export function InfoIcon({ className = 'h-3.5 w-3.5' }: { className?: string }) {
  return (
    <svg viewBox="0 0 16 16" aria-hidden="true" focusable="false" className={`inline-block shrink-0 ${className}`}>
      <circle cx="8" cy="8" r="7" fill="none" stroke="currentColor" strokeWidth="1.5" />
      <rect x="7.25" y="7" width="1.5" height="5" rx="0.75" fill="currentColor" />
      <circle cx="8" cy="4.75" r="1" fill="currentColor" />
    </svg>
  );
}
