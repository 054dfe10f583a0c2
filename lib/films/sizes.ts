/**
 * The sizes of a film's renditions (lib/films/process.ts makes them; the case page sizes the
 * thumbnails' boxes with the same rule). Pure, and free of sharp: client components import it.
 */
export const WEB_MAX_SIDE = 4096;
export const THUMB_SIDE = 320;

/** width × height scaled down (never up) to fit inside side × side, at least 1 px each way. */
export function fitInside(width: number, height: number, side: number): { width: number; height: number } {
  const k = Math.min(1, side / Math.max(width, height));
  return { width: Math.max(1, Math.round(width * k)), height: Math.max(1, Math.round(height * k)) };
}
