/**
 * Tooth notation: FDI two-digit (ISO 3950) as Lamina's stored form, and the ADA Universal
 * numbering (1–32, primary A–T) for display and entry where a practice prefers it.
 *
 * FDI two-digit tooth notation (ISO 3950, "Dentistry — Designation system for teeth and areas
 * of the oral cavity"). The first digit is the quadrant, the second the position counted from
 * the midline.
 *
 *   Permanent: 1 upper right, 2 upper left, 3 lower left, 4 lower right; positions 1–8
 *              (1 central incisor, 2 lateral incisor, 3 canine, 4–5 premolars, 6–8 molars).
 *   Primary:   5 upper right, 6 upper left, 7 lower left, 8 lower right; positions 1–5
 *              (1 central incisor, 2 lateral incisor, 3 canine, 4–5 molars — no premolars).
 *
 * Source: ISO 3950 as summarised in standard dental-anatomy texts; these tables are written
 * from memory of that standard and checked against the published charts in the unit tests.
 *
 * Lamina's rule for primary teeth (51–85): rejected by default, because the registry follows
 * root canal treatment of permanent teeth; a practice that also treats retained primary teeth
 * (e.g. a retained 75 in an adult with 35 missing) turns on `allowPrimary`, and the tooth is
 * then marked `dentition: 'primary'` so outcome reports can keep it apart.
 */

export type Dentition = 'permanent' | 'primary';
export type ToothGroup = 'incisor' | 'canine' | 'premolar' | 'molar';
export type Arch = 'upper' | 'lower';
/** The patient's side, not the viewer's. */
export type Side = 'right' | 'left';

export interface ToothInfo {
  /** The two-digit FDI number, e.g. 36. */
  fdi: number;
  quadrant: number;
  /** Position from the midline: 1–8 permanent, 1–5 primary. */
  position: number;
  dentition: Dentition;
  group: ToothGroup;
  arch: Arch;
  side: Side;
  /** e.g. "lower left first molar", "upper right primary canine". */
  name: string;
}

export interface FdiOptions {
  /** Accept primary teeth 51–85 (the practice setting). Default false. */
  allowPrimary?: boolean;
}

export type ToothResult = { ok: true; tooth: ToothInfo } | { ok: false; reason: string };

export const TOOTH_GROUPS: readonly ToothGroup[] = ['incisor', 'canine', 'premolar', 'molar'];

// ISO 3950 quadrant digits → arch and side.
const QUADRANTS: Record<number, { dentition: Dentition; arch: Arch; side: Side }> = {
  1: { dentition: 'permanent', arch: 'upper', side: 'right' },
  2: { dentition: 'permanent', arch: 'upper', side: 'left' },
  3: { dentition: 'permanent', arch: 'lower', side: 'left' },
  4: { dentition: 'permanent', arch: 'lower', side: 'right' },
  5: { dentition: 'primary', arch: 'upper', side: 'right' },
  6: { dentition: 'primary', arch: 'upper', side: 'left' },
  7: { dentition: 'primary', arch: 'lower', side: 'left' },
  8: { dentition: 'primary', arch: 'lower', side: 'right' },
};

// ISO 3950 position digits → tooth type, per dentition.
const PERMANENT_POSITIONS: readonly { group: ToothGroup; name: string }[] = [
  { group: 'incisor', name: 'central incisor' },
  { group: 'incisor', name: 'lateral incisor' },
  { group: 'canine', name: 'canine' },
  { group: 'premolar', name: 'first premolar' },
  { group: 'premolar', name: 'second premolar' },
  { group: 'molar', name: 'first molar' },
  { group: 'molar', name: 'second molar' },
  { group: 'molar', name: 'third molar' },
];
const PRIMARY_POSITIONS: readonly { group: ToothGroup; name: string }[] = [
  { group: 'incisor', name: 'primary central incisor' },
  { group: 'incisor', name: 'primary lateral incisor' },
  { group: 'canine', name: 'primary canine' },
  { group: 'molar', name: 'primary first molar' },
  { group: 'molar', name: 'primary second molar' },
];

function positionsOf(dentition: Dentition) {
  return dentition === 'permanent' ? PERMANENT_POSITIONS : PRIMARY_POSITIONS;
}

/** The 32 permanent teeth in FDI order: 11–18, 21–28, 31–38, 41–48. */
export const PERMANENT_TEETH: readonly number[] = [1, 2, 3, 4].flatMap((q) =>
  [1, 2, 3, 4, 5, 6, 7, 8].map((p) => q * 10 + p),
);
/** The 20 primary teeth in FDI order: 51–55, 61–65, 71–75, 81–85. */
export const PRIMARY_TEETH: readonly number[] = [5, 6, 7, 8].flatMap((q) => [1, 2, 3, 4, 5].map((p) => q * 10 + p));

function build(quadrant: number, position: number): ToothInfo {
  const q = QUADRANTS[quadrant]!;
  const pos = positionsOf(q.dentition)[position - 1]!;
  return {
    fdi: quadrant * 10 + position,
    quadrant,
    position,
    dentition: q.dentition,
    group: pos.group,
    arch: q.arch,
    side: q.side,
    name: `${q.arch} ${q.side} ${pos.name}`,
  };
}

const TABLE = new Map<number, ToothInfo>();
for (const t of [...PERMANENT_TEETH, ...PRIMARY_TEETH]) TABLE.set(t, build(Math.floor(t / 10), t % 10));

/**
 * Reads an FDI tooth number from a number (36) or a string ("36", " 36 "), with a reason a
 * person can act on when it is no tooth. Two digits exactly: "036", "6" and "3.6" are refused.
 */
export function parseFdi(input: unknown, options: FdiOptions = {}): ToothResult {
  let text: string;
  if (typeof input === 'number') {
    if (!Number.isInteger(input)) return fail(`${input} is not a tooth number: FDI numbers are two whole digits, e.g. 36.`);
    text = String(input);
  } else if (typeof input === 'string') {
    text = input.trim();
    if (text === '') return fail('Enter the tooth in FDI notation: two digits, quadrant then tooth, e.g. 36.');
  } else {
    return fail('Enter the tooth in FDI notation: two digits, quadrant then tooth, e.g. 36.');
  }
  if (!/^\d{2}$/.test(text)) {
    return fail(`“${text}” is not an FDI tooth number: use two digits, quadrant then tooth, e.g. 36.${universalHint(text)}`);
  }
  const quadrant = Number(text[0]);
  const position = Number(text[1]);
  const q = QUADRANTS[quadrant];
  if (!q) {
    return fail(
      `${text} is no tooth: the first digit is the quadrant, 1–4 for permanent teeth (5–8 for primary teeth), not ${quadrant}.${universalHint(text)}`,
    );
  }
  const max = positionsOf(q.dentition).length;
  if (position < 1 || position > max) {
    return fail(
      `${text} is no tooth: the second digit is the tooth from the midline, 1–${max} in a ${q.dentition} quadrant, not ${position}.${universalHint(text)}`,
    );
  }
  if (q.dentition === 'primary' && !options.allowPrimary) {
    return fail(
      `${text} is a primary (baby) tooth; this registry records permanent teeth (11–18, 21–28, 31–38, 41–48) unless the practice accepts primary teeth.`,
    );
  }
  return { ok: true, tooth: TABLE.get(quadrant * 10 + position)! };
}

/** When an invalid FDI entry is a valid Universal number, say which FDI tooth that would be. */
function universalHint(text: string): string {
  if (!/^\d{1,2}$/.test(text)) return '';
  const n = Number(text);
  if (n < 1 || n > 32 || String(n) !== text) return '';
  return ` (If ${n} is a Universal number, the FDI tooth is ${UNIVERSAL_TO_FDI.get(String(n))}.)`;
}

function fail(reason: string): ToothResult {
  return { ok: false, reason };
}

export function isFdiTooth(input: unknown, options: FdiOptions = {}): boolean {
  return parseFdi(input, options).ok;
}

/** Facts about a valid FDI tooth (permanent or primary); throws a RangeError for anything else. */
export function toothInfo(fdi: number): ToothInfo {
  const info = TABLE.get(fdi);
  if (!info) throw new RangeError(`Not an FDI tooth: ${fdi}`);
  return info;
}

export function toothGroup(fdi: number): ToothGroup {
  return toothInfo(fdi).group;
}

export function toothArch(fdi: number): Arch {
  return toothInfo(fdi).arch;
}

/** Incisors and canines are anterior teeth; premolars and molars posterior. */
export function isAnterior(fdi: number): boolean {
  const g = toothGroup(fdi);
  return g === 'incisor' || g === 'canine';
}

// ---------------------------------------------------------------------------------------------
// ADA Universal numbering (American Dental Association). Permanent teeth 1–32: 1 is the upper
// right third molar, counting along the upper arch to 16 (upper left third molar), then 17 is
// the lower left third molar, counting along the lower arch to 32 (lower right third molar).
// Primary teeth A–T in the same path: A upper right second molar … J upper left second molar,
// K lower left second molar … T lower right second molar.
// Source: the ADA Universal chart (as reproduced in dental-anatomy texts), from memory,
// checked in the unit tests against published pairs (FDI 11 = 8, 18 = 1, 28 = 16, 36 = 19,
// 38 = 17, 48 = 32; 55 = A, 65 = J, 75 = K, 85 = T).
// ---------------------------------------------------------------------------------------------

/** A Universal designation: a number 1–32 for a permanent tooth, a letter A–T for a primary one. */
export type UniversalTooth = number | string;

const PRIMARY_LETTERS = 'ABCDEFGHIJKLMNOPQRST';

/** The path of the Universal count, in FDI numbers: upper right back to front, upper left front to back, then lower left back to front, lower right front to back. */
const PERMANENT_PATH: readonly number[] = [18, 17, 16, 15, 14, 13, 12, 11, 21, 22, 23, 24, 25, 26, 27, 28, 38, 37, 36, 35, 34, 33, 32, 31, 41, 42, 43, 44, 45, 46, 47, 48];
const PRIMARY_PATH: readonly number[] = [55, 54, 53, 52, 51, 61, 62, 63, 64, 65, 75, 74, 73, 72, 71, 81, 82, 83, 84, 85];

const FDI_TO_UNIVERSAL = new Map<number, UniversalTooth>();
const UNIVERSAL_TO_FDI = new Map<string, number>();
PERMANENT_PATH.forEach((fdi, i) => {
  FDI_TO_UNIVERSAL.set(fdi, i + 1);
  UNIVERSAL_TO_FDI.set(String(i + 1), fdi);
});
PRIMARY_PATH.forEach((fdi, i) => {
  FDI_TO_UNIVERSAL.set(fdi, PRIMARY_LETTERS[i]!);
  UNIVERSAL_TO_FDI.set(PRIMARY_LETTERS[i]!, fdi);
});

/** FDI → Universal: 36 → 19, 55 → 'A'. Throws a RangeError for a number that is no tooth. */
export function fdiToUniversal(fdi: number): UniversalTooth {
  const u = FDI_TO_UNIVERSAL.get(fdi);
  if (u === undefined) throw new RangeError(`Not an FDI tooth: ${fdi}`);
  return u;
}

/**
 * Reads a Universal designation typed by a person (19, "19", "#19", "a") and gives the FDI
 * tooth, with a reason when it is none. Primary letters follow the same `allowPrimary` rule.
 */
export function parseUniversal(input: unknown, options: FdiOptions = {}): ToothResult {
  let text = typeof input === 'number' ? String(input) : typeof input === 'string' ? input.trim() : '';
  if (text.startsWith('#')) text = text.slice(1).trim();
  const fdi = UNIVERSAL_TO_FDI.get(/^[a-t]$/i.test(text) ? text.toUpperCase() : text);
  if (fdi === undefined) {
    return fail(`“${String(input)}” is not a Universal tooth: use 1–32 for permanent teeth (A–T for primary teeth).`);
  }
  return parseFdi(fdi, options);
}

/** Universal → FDI: 19 → 36, 'A' → 55. Throws a RangeError for anything else. */
export function universalToFdi(universal: UniversalTooth): number {
  const fdi = UNIVERSAL_TO_FDI.get(typeof universal === 'string' ? universal.toUpperCase() : String(universal));
  if (fdi === undefined) throw new RangeError(`Not a Universal tooth: ${String(universal)}`);
  return fdi;
}
