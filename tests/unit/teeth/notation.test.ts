import { describe, expect, it } from 'vitest';
import {
  PERMANENT_TEETH,
  PRIMARY_TEETH,
  fdiToUniversal,
  formatTooth,
  isAnterior,
  isFdiTooth,
  parseFdi,
  parseToothIn,
  parseUniversal,
  toothInfo,
  toothNotationLabel,
  universalToFdi,
} from '@/lib/teeth';

// Pairs from the ADA Universal chart against ISO 3950 (FDI); the first seven are the ones the
// issue quotes from the published charts, the rest were read off the same chart layout
// (1 = upper right third molar … 16 upper left third molar, 17 lower left third molar … 32).
const UNIVERSAL_PAIRS: [fdi: number, universal: number][] = [
  [11, 8], // issue / ADA chart
  [12, 7], // issue / ADA chart
  [36, 19], // issue / ADA chart
  [48, 32], // issue / ADA chart
  [18, 1], // issue / ADA chart
  [28, 16], // issue / ADA chart
  [38, 17], // issue / ADA chart
  [21, 9], // ADA chart: upper left central incisor
  [13, 6], // ADA chart: upper right canine
  [14, 5], // ADA chart: upper right first premolar
  [16, 3], // ADA chart: upper right first molar
  [26, 14], // ADA chart: upper left first molar
  [31, 24], // ADA chart: lower left central incisor
  [41, 25], // ADA chart: lower right central incisor
  [43, 27], // ADA chart: lower right canine
  [46, 30], // ADA chart: lower right first molar
  [35, 20], // ADA chart: lower left second premolar
];

// Primary teeth, ADA letters (A upper right second molar … J upper left second molar,
// K lower left second molar … T lower right second molar); from the chart as remembered and
// as reproduced in dental-anatomy references (A = 55, J = 65, K = 75, T = 85, O/P lower centrals).
const PRIMARY_PAIRS: [fdi: number, letter: string][] = [
  [55, 'A'],
  [51, 'E'],
  [61, 'F'],
  [65, 'J'],
  [75, 'K'],
  [71, 'O'],
  [81, 'P'],
  [85, 'T'],
  [53, 'C'],
  [83, 'R'],
];

describe('FDI ↔ Universal (ISO 3950 / ADA Universal chart)', () => {
  it.each(UNIVERSAL_PAIRS)('FDI %i is Universal %i', (fdi, universal) => {
    expect(fdiToUniversal(fdi)).toBe(universal);
    expect(universalToFdi(universal)).toBe(fdi);
  });

  it.each(PRIMARY_PAIRS)('primary FDI %i is Universal %s', (fdi, letter) => {
    expect(fdiToUniversal(fdi)).toBe(letter);
    expect(universalToFdi(letter)).toBe(fdi);
    expect(universalToFdi(letter.toLowerCase())).toBe(fdi);
  });

  it('is a bijection between the 32 permanent teeth and 1–32', () => {
    const numbers = PERMANENT_TEETH.map((t) => fdiToUniversal(t));
    expect([...numbers].sort((a, b) => Number(a) - Number(b))).toEqual(Array.from({ length: 32 }, (_, i) => i + 1));
    for (const t of PERMANENT_TEETH) expect(universalToFdi(fdiToUniversal(t))).toBe(t);
  });

  it('is a bijection between the 20 primary teeth and A–T', () => {
    expect(PRIMARY_TEETH.map((t) => fdiToUniversal(t)).sort().join('')).toBe('ABCDEFGHIJKLMNOPQRST');
  });

  it.each([0, 33, -1, 1.5, '08', 'U', '', 'AA'])('universalToFdi rejects %j', (bad) => {
    expect(() => universalToFdi(bad as number | string)).toThrow(RangeError);
  });

  it.each([10, 19, 9, 50, 99, 56, 0])('fdiToUniversal rejects %i', (bad) => {
    expect(() => fdiToUniversal(bad)).toThrow(RangeError);
  });
});

describe('parseFdi accepts the permanent teeth (ISO 3950)', () => {
  it('accepts exactly 11–18, 21–28, 31–38, 41–48 among 0–99', () => {
    const accepted = Array.from({ length: 100 }, (_, i) => i).filter((n) => isFdiTooth(n));
    expect(accepted).toEqual([...PERMANENT_TEETH]);
    expect(accepted).toHaveLength(32);
  });

  it('accepts primary 51–55, 61–65, 71–75, 81–85 only with allowPrimary', () => {
    const accepted = Array.from({ length: 100 }, (_, i) => i).filter((n) => isFdiTooth(n, { allowPrimary: true }));
    expect(accepted).toEqual([...PERMANENT_TEETH, ...PRIMARY_TEETH]);
  });

  it.each([
    ['36', 36],
    [' 36 ', 36],
    [48, 48],
    ['11', 11],
  ])('reads %j as %i', (input, fdi) => {
    const r = parseFdi(input);
    expect(r.ok && r.tooth.fdi).toBe(fdi);
  });
});

describe('parseFdi rejects numbers that are no tooth, with a reason', () => {
  it.each<[unknown, RegExp]>([
    [10, /second digit .* 1–8 .* not 0/],
    [19, /second digit .* 1–8 .* not 9/],
    [29, /not 9/],
    ['09', /first digit is the quadrant.* not 0/],
    [9, /two digits/],
    [50, /1–5 in a primary quadrant, not 0/],
    [56, /1–5 in a primary quadrant, not 6/],
    [99, /first digit is the quadrant.* not 9/],
    [90, /not 9/],
    ['ab', /not an FDI tooth number/],
    [1.5, /not a tooth number: FDI numbers are two whole digits/],
    ['3.6', /not an FDI tooth number/],
    ['036', /not an FDI tooth number/],
    ['', /Enter the tooth/],
    [null, /Enter the tooth/],
    [undefined, /Enter the tooth/],
    [Number.NaN, /not a tooth number/],
    [55, /primary \(baby\) tooth/],
    [85, /primary \(baby\) tooth/],
  ])('%j', (input, reason) => {
    const r = parseFdi(input);
    expect(r.ok).toBe(false);
    if (!r.ok) expect(r.reason).toMatch(reason);
  });

  it('hints at the FDI tooth when the entry looks like a Universal number', () => {
    const r = parseFdi(19);
    expect(!r.ok && r.reason).toMatch(/If 19 is a Universal number, the FDI tooth is 36/);
    const r2 = parseFdi('9');
    expect(!r2.ok && r2.reason).toMatch(/If 9 is a Universal number, the FDI tooth is 21/);
    const r3 = parseFdi(99);
    expect(!r3.ok && r3.reason).not.toMatch(/Universal/);
  });
});

describe('derived facts (ISO 3950 quadrants and positions)', () => {
  it.each<[number, string, string, string, string]>([
    [11, 'incisor', 'upper', 'right', 'upper right central incisor'],
    [12, 'incisor', 'upper', 'right', 'upper right lateral incisor'],
    [13, 'canine', 'upper', 'right', 'upper right canine'],
    [24, 'premolar', 'upper', 'left', 'upper left first premolar'],
    [25, 'premolar', 'upper', 'left', 'upper left second premolar'],
    [26, 'molar', 'upper', 'left', 'upper left first molar'],
    [37, 'molar', 'lower', 'left', 'lower left second molar'],
    [38, 'molar', 'lower', 'left', 'lower left third molar'],
    [31, 'incisor', 'lower', 'left', 'lower left central incisor'],
    [43, 'canine', 'lower', 'right', 'lower right canine'],
    [45, 'premolar', 'lower', 'right', 'lower right second premolar'],
    [46, 'molar', 'lower', 'right', 'lower right first molar'],
    // primary dentition has no premolars: positions 4 and 5 are molars
    [54, 'molar', 'upper', 'right', 'upper right primary first molar'],
    [63, 'canine', 'upper', 'left', 'upper left primary canine'],
    [75, 'molar', 'lower', 'left', 'lower left primary second molar'],
    [81, 'incisor', 'lower', 'right', 'lower right primary central incisor'],
  ])('%i is a %s, %s arch, %s side', (fdi, group, arch, side, name) => {
    const t = toothInfo(fdi);
    expect([t.group, t.arch, t.side, t.name]).toEqual([group, arch, side, name]);
    expect(t.dentition).toBe(fdi >= 50 ? 'primary' : 'permanent');
  });

  it('counts the permanent groups: 8 incisors, 4 canines, 8 premolars, 12 molars', () => {
    const count = (g: string) => PERMANENT_TEETH.filter((t) => toothInfo(t).group === g).length;
    expect([count('incisor'), count('canine'), count('premolar'), count('molar')]).toEqual([8, 4, 8, 12]);
  });

  it('isAnterior is true for incisors and canines only', () => {
    expect(PERMANENT_TEETH.filter(isAnterior)).toEqual([11, 12, 13, 21, 22, 23, 31, 32, 33, 41, 42, 43]);
  });

  it('toothInfo throws for a number that is no tooth', () => {
    expect(() => toothInfo(19)).toThrow(RangeError);
  });
});

describe('display in the practice notation', () => {
  it.each<[number, 'fdi' | 'universal', string]>([
    [36, 'fdi', '36'],
    [36, 'universal', '19'],
    [11, 'universal', '8'],
    [48, 'universal', '32'],
    [55, 'universal', 'A'],
    [55, 'fdi', '55'],
  ])('formatTooth(%i, %s) = %s', (fdi, notation, shown) => {
    expect(formatTooth(fdi, notation)).toBe(shown);
  });

  it('adds the name on request', () => {
    expect(formatTooth(36, 'universal', { withName: true })).toBe('19 (lower left first molar)');
    expect(toothNotationLabel('universal')).toBe('Tooth (Universal)');
  });

  it('reads entry in the practice notation back to FDI', () => {
    const u = parseToothIn('#19', 'universal');
    expect(u.ok && u.tooth.fdi).toBe(36);
    const f = parseToothIn('19', 'fdi');
    expect(f.ok).toBe(false);
    const a = parseUniversal('a');
    expect(a.ok).toBe(false); // primary refused by default
    const a2 = parseUniversal('a', { allowPrimary: true });
    expect(a2.ok && a2.tooth.fdi).toBe(55);
    expect(parseUniversal(33).ok).toBe(false);
  });
});
