'use client';
import Link from 'next/link';
import { usePathname } from 'next/navigation';

export function AppNav({ items }: { items: { href: string; label: string; match?: string[] }[] }) {
  const pathname = usePathname();
  return (
    <nav aria-label="Main" className="flex flex-wrap gap-1">
      {[{ href: '/', label: 'Home' }, ...items].map((item) => {
        const current =
          item.href === '/' ? pathname === '/' : [item.href, ...('match' in item ? (item.match ?? []) : [])].some((p) => pathname.startsWith(p));
        return (
          <Link
            key={item.href}
            href={item.href}
            aria-current={current ? 'page' : undefined}
            className={`rounded-md px-3 py-2 text-sm font-medium no-underline ${
              current ? 'bg-dura-700 text-white' : 'text-ink-700 hover:bg-bone-200'
            }`}
          >
            {item.label}
          </Link>
        );
      })}
    </nav>
  );
}
