'use client';
import dynamic from 'next/dynamic';
import { BlockSkeleton } from '@/components/ui/Skeleton';

/** The chart (recharts) loads after the page, so the page's First Load JS stays small (next/dynamic). */
export const SurvivalChart = dynamic(() => import('./SurvivalChart').then((m) => m.SurvivalChart), {
  ssr: false,
  loading: () => <BlockSkeleton lines={6} label="Loading the chart" />,
});
