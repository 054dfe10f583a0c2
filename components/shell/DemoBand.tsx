import { InfoIcon } from '@/components/ui/InfoIcon';

/**
 * Shown on every page while Lamina runs in demo mode (LAMINA_DEMO=1): mail is caught by the
 * local fake, never delivered, and administrators can read it on the Dev mailbox page.
 */
export function DemoBand() {
  return (
    <div role="note" aria-label="Demo mode" data-testid="demo-band" className="border-b border-state-watch/30 bg-state-watchBg px-4 py-1.5 text-center text-sm text-state-watch">
      <InfoIcon className="mr-1.5 inline h-3.5 w-3.5 align-[-2px]" />
      <strong>Demo</strong> — mail is caught locally and never delivered. Use invented data only.
    </div>
  );
}
