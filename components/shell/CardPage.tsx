import type { ReactNode } from 'react';
import { Wordmark } from '@/components/ui/LaminaMark';

/** A page with one centred card under the wordmark, for pages outside the signed-in shell. */
export function CardPage({ children, footer, width = 'max-w-md' }: { children: ReactNode; footer: ReactNode; width?: string }) {
  return (
    <main id="main" className="flex min-h-screen items-start justify-center px-4 py-12 md:items-center">
      <div className={`w-full ${width}`}>
        <div className="mb-6 flex justify-center">
          <Wordmark />
        </div>
        <div className="card p-6 md:p-8">{children}</div>
        <p className="mt-6 text-center text-xs text-ink-500">{footer}</p>
      </div>
    </main>
  );
}
