import { OUTCOME_LABELS, type ReviewOutcome } from '@/lib/scoring';
import { VISIT_STATUS_LABELS, type VisitStatus } from '@/lib/recall/status';

type Tone = 'ok' | 'watch' | 'alert' | 'info' | 'neutral';

const TONES: Record<Tone, string> = {
  ok: 'bg-state-okBg text-state-ok border-state-ok/30',
  watch: 'bg-state-watchBg text-state-watch border-state-watch/30',
  alert: 'bg-state-alertBg text-state-alert border-state-alert/30',
  info: 'bg-state-infoBg text-state-info border-state-info/30',
  neutral: 'bg-bone-100 text-ink-700 border-bone-300',
};

/** A state as a word, an icon and a tone together — never colour alone. */
export function StateBadge({ tone, icon, label }: { tone: Tone; icon: string; label: string }) {
  return (
    <span className={`inline-flex items-center gap-1 whitespace-nowrap rounded-full border px-2 py-0.5 text-xs font-medium ${TONES[tone]}`}>
      <span aria-hidden="true">{icon}</span>
      {label}
    </span>
  );
}

const OUTCOME_LOOK: Record<ReviewOutcome, { tone: Tone; icon: string }> = {
  healed: { tone: 'ok', icon: '✓' },
  healing: { tone: 'watch', icon: '◐' },
  uncertain: { tone: 'neutral', icon: '?' },
  disease: { tone: 'alert', icon: '✕' },
  'tooth-extracted': { tone: 'alert', icon: '⊘' },
  retreated: { tone: 'info', icon: '↻' },
  'apical-surgery': { tone: 'info', icon: '✚' },
};

export function OutcomeBadge({ outcome }: { outcome: ReviewOutcome | null | undefined }) {
  if (!outcome) return <StateBadge tone="neutral" icon="…" label="Not reviewed yet" />;
  return <StateBadge {...OUTCOME_LOOK[outcome]} label={OUTCOME_LABELS[outcome]} />;
}

const VISIT_LOOK: Record<VisitStatus, { tone: Tone; icon: string }> = {
  planned: { tone: 'neutral', icon: '○' },
  invited: { tone: 'info', icon: '✉' },
  confirmed: { tone: 'info', icon: '✓' },
  attended: { tone: 'ok', icon: '●' },
  missed: { tone: 'alert', icon: '✕' },
  declined: { tone: 'watch', icon: '–' },
  cancelled: { tone: 'neutral', icon: '⊘' },
  closed: { tone: 'alert', icon: '⌀' },
};

export function VisitStatusBadge({ status }: { status: VisitStatus }) {
  return <StateBadge {...VISIT_LOOK[status]} label={VISIT_STATUS_LABELS[status]} />;
}
