// See app/(app)/cases/[id]/(view)/loading.tsx: prefetches stop here; nothing else sits under it.
import { BlockSkeleton } from '@/components/ui/Skeleton';

export default function Loading() {
  return <BlockSkeleton label="Loading the patient" lines={6} />;
}
