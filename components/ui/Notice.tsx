import type { ReactNode } from 'react';
import { InfoIcon } from './InfoIcon';

const STYLES = {
  info: { box: 'border-state-info/30 bg-state-infoBg text-state-info', icon: null, word: 'Note' },
  ok: { box: 'border-state-ok/30 bg-state-okBg text-state-ok', icon: '✓', word: 'Done' },
  alert: { box: 'border-state-alert/30 bg-state-alertBg text-state-alert', icon: '!', word: 'Problem' },
} as const;

/** A message box: colour, an icon and a word together, never colour alone. */
export function Notice({ tone, children, role }: { tone: keyof typeof STYLES; children: ReactNode; role?: 'alert' | 'status' }) {
  const s = STYLES[tone];
  return (
    <div role={role ?? (tone === 'alert' ? 'alert' : 'status')} className={`flex gap-2 rounded-md border px-3 py-2 text-sm ${s.box}`}>
      <span aria-hidden="true" className="font-bold">
        {s.icon ?? <InfoIcon className="mt-0.5 h-4 w-4" />}
      </span>
      <span>
        <span className="sr-only">{s.word}: </span>
        {children}
      </span>
    </div>
  );
}
