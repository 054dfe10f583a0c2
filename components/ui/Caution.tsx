import { SCORING_CAUTION } from '@/lib/scoring';

/** The short line shown wherever Lamina scores or suggests. */
export function Caution({ text = SCORING_CAUTION }: { text?: string }) {
  return (
    <p className="flex gap-2 text-xs text-ink-500">
      <span aria-hidden="true">ⓘ</span>
      <span>{text}</span>
    </p>
  );
}
