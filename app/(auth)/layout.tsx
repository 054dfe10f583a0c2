import { Wordmark } from '@/components/ui/LaminaMark';

export default function AuthLayout({ children }: { children: React.ReactNode }) {
  return (
    <main id="main" className="flex min-h-screen items-start justify-center px-4 py-12 md:items-center">
      <div className="w-full max-w-md">
        <div className="mb-6 flex justify-center">
          <Wordmark />
        </div>
        <div className="card p-6 md:p-8">{children}</div>
        <p className="mt-6 text-center text-xs text-ink-500">
          Lamina holds patient health data. Use it only for the care and audit of your practice’s patients.
        </p>
      </div>
    </main>
  );
}
