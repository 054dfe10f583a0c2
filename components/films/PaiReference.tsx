/**
 * Lamina's own reference drawings of the periapical index (PAI, Ørstavik, Kerekes & Eriksen 1986):
 * one small schematic per score, drawn for Lamina (a root's apex, its ligament space and the bone
 * around it) — not a copy or tracing of the published reference radiographs. Bone is light, the
 * root mid-grey, radiolucency dark, as on a film. Shown beside the scoring buttons as a reminder
 * of what changes from one score to the next; the published reference set remains the standard.
 */
import type { PaiScore } from '@/lib/scoring/pai';

const BONE = '#d9d4c7';
const ROOT = '#8d8a84';
const DARK = '#2b2f33';

/** Speckles of the trabecular bone, fixed so every drawing matches. */
const SPECKS = [
  [8, 12], [22, 8], [52, 10], [66, 16], [10, 34], [64, 38], [6, 58], [70, 62], [14, 82], [30, 90], [50, 88], [66, 84],
] as const;

function Root() {
  // A tapering single root, crown side up, apex near the middle of the lower half.
  return (
    <>
      <path d="M26 0 L50 0 L45 52 Q38 62 31 52 Z" fill={ROOT} />
      <path d="M37 0 L39 0 L38.6 52 L37.4 52 Z" fill="#f4f2ec" opacity="0.9" />
    </>
  );
}

function Drawing({ score }: { score: PaiScore }) {
  return (
    <svg viewBox="0 0 76 100" className="h-20 w-auto" aria-hidden="true" focusable="false">
      <rect width="76" height="100" fill={BONE} />
      {SPECKS.map(([x, y], i) => (
        <circle key={i} cx={x} cy={y} r={1.6} fill="#b9b3a5" />
      ))}
      {score === 1 && <path d="M24 0 L52 0 L47 53 Q38 66 29 53 Z" fill="none" stroke="#5d5a55" strokeWidth="1.2" />}
      {score === 2 && (
        <>
          <path d="M23.5 0 L52.5 0 L48 54 Q38 69 28 54 Z" fill="none" stroke="#5d5a55" strokeWidth="2.4" />
          <circle cx="30" cy="64" r="1.8" fill="#a39c8e" />
          <circle cx="46" cy="63" r="1.8" fill="#a39c8e" />
        </>
      )}
      {score === 3 && (
        <>
          <ellipse cx="38" cy="60" rx="13" ry="10" fill="#7b776f" opacity="0.55" />
          <path d="M23 0 L53 0 L48.5 54 Q38 71 27.5 54 Z" fill="none" stroke="#4d4a46" strokeWidth="3" />
        </>
      )}
      {score === 4 && <ellipse cx="38" cy="62" rx="15" ry="13" fill={DARK} stroke="#f4f2ec" strokeWidth="1.4" />}
      {score === 5 && (
        <>
          <path
            d="M38 42 L46 46 L58 42 L54 54 L66 60 L55 66 L60 80 L46 74 L38 86 L31 74 L16 80 L21 66 L9 60 L22 54 L18 42 L30 46 Z"
            fill={DARK}
          />
          <path d="M12 58 L4 56 M64 58 L72 55 M38 86 L38 96 M18 78 L10 88 M58 78 L66 88" stroke={DARK} strokeWidth="2" />
        </>
      )}
      <Root />
    </svg>
  );
}

const WORDS: Record<PaiScore, string> = {
  1: 'Even, thin ligament space; bone normal.',
  2: 'Ligament space a little wider; small changes in the bone.',
  3: 'Wider space with some loss of mineral around the apex.',
  4: 'A clearly outlined dark area at the apex.',
  5: 'A dark area with signs of spreading into the bone.',
};

/** The drawing of one PAI score, with its number and a few words. */
export function PaiReferenceDrawing({ score, compact = false }: { score: PaiScore; compact?: boolean }) {
  return (
    <span className="flex flex-col items-center gap-1 text-center" data-testid={`pai-drawing-${score}`}>
      <Drawing score={score} />
      <span className="text-sm font-semibold">PAI {score}</span>
      {!compact && <span className="text-xs leading-snug text-ink-700">{WORDS[score]}</span>}
    </span>
  );
}

export const PAI_REFERENCE_CAUTION =
  'Lamina’s own schematic drawings, a reminder of the scale — not the published reference films. They support your clinical judgement; Lamina does not diagnose.';
