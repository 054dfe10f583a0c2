'use client';
import dynamic from 'next/dynamic';
import { BlockSkeleton } from '@/components/ui/Skeleton';

/**
 * The patient form (react-hook-form, zod and the patient schema) loads after the page, so the
 * new-patient page stays under 200 kB of First Load JS (next/dynamic, as the review form).
 */
export const PatientForm = dynamic(() => import('./PatientForm').then((m) => m.PatientForm), {
  ssr: false,
  loading: () => <BlockSkeleton lines={8} label="Loading the patient form" />,
});
