// The detail page keeps a loading boundary of its own (the (view) group): a link's prefetch
// renders only up to here, while /cases/[id]/edit stays outside it (a real 403 from the first byte).
import { BlockSkeleton } from '@/components/ui/Skeleton';

export default function Loading() {
  return <BlockSkeleton label="Loading the case" lines={8} />;
}
