import { BlockSkeleton } from '@/components/ui/Skeleton';

export default function Loading() {
  return <BlockSkeleton label="Loading the patient" lines={6} />;
}
