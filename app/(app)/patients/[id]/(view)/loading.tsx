// See app/(app)/cases/[id]/(view)/loading.tsx: prefetches stop here; nothing else sits under it.
export { default } from '../../(list)/loading';
