/**
 * Lamina's mark: a root outline with the thin unbroken line of bone around its tip — the
 * lamina dura that returns when a lesion heals.
 */
export function LaminaMark({ size = 32, className }: { size?: number; className?: string }) {
  return (
    <svg width={size} height={size} viewBox="0 0 32 32" aria-hidden="true" className={className} focusable="false">
      <rect width="32" height="32" rx="8" fill="#3a3470" />
      <path d="M11 6 C11 14 12.5 21 16 24 C19.5 21 21 14 21 6" fill="none" stroke="#f6f3ee" strokeWidth="2.2" strokeLinecap="round" />
      <path d="M8 8 C8 18 11 25.5 16 27.5 C21 25.5 24 18 24 8" fill="none" stroke="#9c95d6" strokeWidth="1.4" strokeLinecap="round" />
    </svg>
  );
}

export function Wordmark() {
  return (
    <span className="flex items-center gap-2">
      <LaminaMark size={28} />
      <span className="font-serif text-xl font-semibold tracking-tight text-dura-800">Lamina</span>
    </span>
  );
}
