import { z } from 'zod';

/** Page and page size from a query string, with safe bounds. */
export const Paging = z.object({
  page: z.coerce.number().int().min(1).default(1),
  pageSize: z.coerce.number().int().min(1).max(200).default(50),
});

export function searchParamsObject(url: string | URL): Record<string, string> {
  return Object.fromEntries(new URL(url).searchParams.entries());
}
