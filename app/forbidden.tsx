import Link from 'next/link';
import { Wordmark } from '@/components/ui/LaminaMark';

export default function Forbidden() {
  return (
    <main id="main" className="mx-auto max-w-xl px-4 py-16 text-center">
      <div className="mb-6 flex justify-center">
        <Wordmark />
      </div>
      <h1 className="text-3xl">Not part of your role</h1>
      <p className="mt-3 text-ink-700">Your roles in this practice do not open this area. If you need it, ask your practice administrator.</p>
      <p className="mt-6">
        <Link href="/">Go to your home page</Link>
      </p>
    </main>
  );
}
