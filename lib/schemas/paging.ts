import { z } from 'zod';

/** The page size of a list when the query gives none. */
export const PAGE_SIZE = 50;

const PAGE = { error: 'The page is a whole number from 1.' };
const PAGE_SIZE_WORDS = { error: 'The page size is a whole number from 1 to 200.' };

/** Page and page size from a query string, with safe bounds and words for each mistake. */
export const Paging = z.object({
  page: z.coerce.number(PAGE).int(PAGE).min(1, PAGE).default(1),
  pageSize: z.coerce.number(PAGE_SIZE_WORDS).int(PAGE_SIZE_WORDS).min(1, PAGE_SIZE_WORDS).max(200, PAGE_SIZE_WORDS).default(PAGE_SIZE),
});

export function searchParamsObject(url: string | URL): Record<string, string> {
  return Object.fromEntries(new URL(url).searchParams.entries());
}
