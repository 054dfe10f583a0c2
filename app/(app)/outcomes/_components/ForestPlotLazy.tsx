'use client';
import dynamic from 'next/dynamic';
import { BlockSkeleton } from '@/components/ui/Skeleton';

/** The forest plot (recharts) loads after the page, so the page's First Load JS stays small (next/dynamic). */
export const ForestPlot = dynamic(() => import('./ForestPlot').then((m) => m.ForestPlot), {
  ssr: false,
  loading: () => <BlockSkeleton lines={6} label="Loading the chart" />,
});
