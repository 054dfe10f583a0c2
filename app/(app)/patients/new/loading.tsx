import { BlockSkeleton } from '@/components/ui/Skeleton';

export default function Loading() {
  return <BlockSkeleton label="Loading the new patient form" lines={8} />;
}
