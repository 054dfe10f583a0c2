'use client';
import dynamic from 'next/dynamic';
import { BlockSkeleton } from '@/components/ui/Skeleton';

/** The funnel plot (recharts) loads after the page, so the page's First Load JS stays small (next/dynamic). */
export const FunnelChart = dynamic(() => import('./FunnelChart').then((m) => m.FunnelChart), {
  ssr: false,
  loading: () => <BlockSkeleton lines={6} label="Loading the chart" />,
});
