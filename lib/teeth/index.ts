/**
 * Teeth: one place for tooth numbers. Lamina stores every tooth as its FDI two-digit number
 * (ISO 3950) and only *shows* it in the practice's preferred notation. Pure code: no I/O.
 */
import { fdiToUniversal, parseFdi, parseUniversal, toothInfo, type FdiOptions, type ToothResult } from './notation';

export * from './notation';

/** The practice preference (Practice.toothNotation). */
export type ToothNotation = 'fdi' | 'universal';
export const TOOTH_NOTATIONS: readonly ToothNotation[] = ['fdi', 'universal'];

export interface FormatToothOptions {
  /** Add the tooth's name: "36 (lower left first molar)". */
  withName?: boolean;
}

/**
 * A stored FDI tooth as the practice wants to read it: formatTooth(36, 'fdi') → "36",
 * formatTooth(36, 'universal') → "19", formatTooth(55, 'universal') → "A".
 */
export function formatTooth(fdi: number, notation: ToothNotation, options: FormatToothOptions = {}): string {
  const info = toothInfo(fdi);
  const shown = notation === 'universal' ? String(fdiToUniversal(fdi)) : String(info.fdi);
  return options.withName ? `${shown} (${info.name})` : shown;
}

/** Reads a tooth typed in the practice's notation and gives back the FDI tooth to store. */
export function parseToothIn(input: unknown, notation: ToothNotation, options: FdiOptions = {}): ToothResult {
  return notation === 'universal' ? parseUniversal(input, options) : parseFdi(input, options);
}

/** The column heading that goes with formatTooth, so a reader knows which notation a number is in. */
export function toothNotationLabel(notation: ToothNotation): string {
  return notation === 'universal' ? 'Tooth (Universal)' : 'Tooth (FDI)';
}
