import { TableSkeleton } from '@/components/ui/Skeleton';

export default function Loading() {
  return <TableSkeleton label="Loading the case list" />;
}
