'use client';
import dynamic from 'next/dynamic';
import { BlockSkeleton } from '@/components/ui/Skeleton';

/**
 * The case form (react-hook-form, zod and the case schema) loads after the page, so the new-case
 * and edit pages stay under 200 kB of First Load JS (next/dynamic, as the review form).
 */
export const CaseForm = dynamic(() => import('./CaseForm').then((m) => m.CaseForm), {
  ssr: false,
  loading: () => <BlockSkeleton lines={10} label="Loading the case form" />,
});
