import { BlockSkeleton } from '@/components/ui/Skeleton';

export default function Loading() {
  return <BlockSkeleton label="Loading the new case form" lines={8} />;
}
