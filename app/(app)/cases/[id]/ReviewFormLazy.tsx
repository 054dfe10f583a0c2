'use client';
import dynamic from 'next/dynamic';
import { BlockSkeleton } from '@/components/ui/Skeleton';

/**
 * The review form (react-hook-form and the zod schemas) loads after the case page, and only for
 * those who may record a review: the case page's First Load JS stays small (next/dynamic).
 */
export const ReviewForm = dynamic(() => import('./ReviewForm').then((m) => m.ReviewForm), {
  ssr: false,
  loading: () => <BlockSkeleton lines={5} label="Loading the review form" />,
});
