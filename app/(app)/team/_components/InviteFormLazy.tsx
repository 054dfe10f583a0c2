'use client';
import dynamic from 'next/dynamic';
import { BlockSkeleton } from '@/components/ui/Skeleton';

/**
 * The invitation form (react-hook-form and the zod schemas) loads after the team list, only for
 * those who may manage the team: the page's First Load JS stays small (next/dynamic).
 */
export const InviteForm = dynamic(() => import('./InviteForm').then((m) => m.InviteForm), {
  ssr: false,
  loading: () => <BlockSkeleton lines={4} label="Loading the invitation form" />,
});
