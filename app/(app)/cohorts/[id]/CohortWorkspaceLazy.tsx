'use client';
import dynamic from 'next/dynamic';
import { BlockSkeleton } from '@/components/ui/Skeleton';

/** The builder and the exports (a form and polling) load after the page. */
export const CohortWorkspaceLazy = dynamic(() => import('./CohortWorkspace').then((m) => m.CohortWorkspace), {
  ssr: false,
  loading: () => <BlockSkeleton lines={8} label="Loading the cohort builder" />,
});
