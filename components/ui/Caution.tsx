import { SCORING_CAUTION } from '@/lib/scoring';
import { InfoIcon } from './InfoIcon';

/** The short line shown wherever Lamina scores or suggests. */
export function Caution({ text = SCORING_CAUTION }: { text?: string }) {
  return (
    <p className="flex gap-2 text-xs text-ink-500">
      <InfoIcon className="mt-0.5 h-3.5 w-3.5" />
      <span>{text}</span>
    </p>
  );
}
