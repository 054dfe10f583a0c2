'use client';
import dynamic from 'next/dynamic';
import { BlockSkeleton } from '@/components/ui/Skeleton';

/** The next-step form (react-hook-form and the zod schema) loads after the worklist, only for clinicians on their own cases. */
export const DecisionForm = dynamic(() => import('./DecisionForm').then((m) => m.DecisionForm), {
  ssr: false,
  loading: () => <BlockSkeleton lines={3} label="Loading the form" />,
});
