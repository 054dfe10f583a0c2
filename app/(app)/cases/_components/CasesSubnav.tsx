import Link from 'next/link';

/** The Cases area's own tabs: cases, patients, and the import of past cases. */
export function CasesSubnav({ current, canImport }: { current: 'cases' | 'patients' | 'import'; canImport: boolean }) {
  const items = [
    { key: 'cases', href: '/cases', label: 'Cases' },
    { key: 'patients', href: '/patients', label: 'Patients' },
    ...(canImport ? [{ key: 'import', href: '/cases/import', label: 'Import past cases' }] : []),
  ] as const;
  return (
    <nav aria-label="Cases area" className="flex gap-1 border-b border-bone-300">
      {items.map((i) => (
        <Link
          key={i.key}
          href={i.href}
          aria-current={current === i.key ? 'page' : undefined}
          className={`-mb-px border-b-2 px-3 py-2 text-sm font-medium no-underline ${
            current === i.key ? 'border-dura-700 text-dura-800' : 'border-transparent text-ink-700 hover:border-bone-400'
          }`}
        >
          {i.label}
        </Link>
      ))}
    </nav>
  );
}
