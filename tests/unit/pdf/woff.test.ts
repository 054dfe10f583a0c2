import { readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { woffToSfnt } from '@/lib/pdf/woff';

// The PDF fonts (app/fonts/pdf) are unpacked from WOFF once (lib/pdf/woff.ts): the PDF writer's font
// library would inflate the glyph table again for every glyph. Checked against the OpenType
// specification's table checksums (which the WOFF file records from the original font, W3C WOFF 1.0
// §5) and against fontkit, the library the PDF writer uses, reading both files.
const FILES = ['inter-latin-400-normal.woff', 'inter-latin-700-normal.woff'];
const read = (f: string) => readFileSync(path.join(process.cwd(), 'app', 'fonts', 'pdf', f));

/** OpenType "Calculating checksums": the sum of the table's big-endian uint32 words, zero-padded; head with checkSumAdjustment as 0. */
function tableChecksum(table: Buffer, tag: string): number {
  const t = Buffer.alloc((table.length + 3) & ~3);
  table.copy(t);
  if (tag === 'head') t.writeUInt32BE(0, 8);
  let sum = 0;
  for (let i = 0; i < t.length; i += 4) sum = (sum + t.readUInt32BE(i)) >>> 0;
  return sum;
}

interface FontkitFont {
  numGlyphs: number;
  postscriptName: string;
  unitsPerEm: number;
  layout: (s: string) => { glyphs: { id: number; advanceWidth: number; path: { toSVG: () => string } }[]; positions: { xAdvance: number; xOffset: number }[] };
}

describe('woffToSfnt', () => {
  it.each(FILES)('%s: every table is the original font’s (its recorded checksum), 4-byte aligned, in a valid offset table', (file) => {
    const woff = read(file);
    const sfnt = woffToSfnt(woff);
    const numTables = woff.readUInt16BE(12);
    expect(sfnt.readUInt32BE(0)).toBe(woff.readUInt32BE(4)); // the flavour
    expect(sfnt.readUInt16BE(4)).toBe(numTables);
    const entrySelector = Math.floor(Math.log2(numTables));
    expect(sfnt.readUInt16BE(6)).toBe(2 ** entrySelector * 16);
    expect(sfnt.readUInt16BE(8)).toBe(entrySelector);
    expect(sfnt.readUInt16BE(10)).toBe(numTables * 16 - 2 ** entrySelector * 16);
    let compressed = 0;
    for (let i = 0; i < numTables; i++) {
      const tag = sfnt.toString('latin1', 12 + i * 16, 16 + i * 16);
      const checksum = sfnt.readUInt32BE(16 + i * 16);
      const offset = sfnt.readUInt32BE(20 + i * 16);
      const length = sfnt.readUInt32BE(24 + i * 16);
      expect(woff.toString('latin1', 44 + i * 20, 48 + i * 20)).toBe(tag);
      expect(length).toBe(woff.readUInt32BE(44 + i * 20 + 12));
      if (woff.readUInt32BE(44 + i * 20 + 8) < length) compressed++;
      expect(offset % 4).toBe(0);
      expect(tableChecksum(sfnt.subarray(offset, offset + length), tag), tag).toBe(checksum);
    }
    expect(compressed).toBeGreaterThan(0); // the test saw inflated tables, not only stored ones
  });

  it.each(FILES)('%s: fontkit reads the same font from both (glyphs, outlines, advances, kerning)', async (file) => {
    const fontkit = (await import('fontkit' as string)) as { create: (b: Buffer) => FontkitFont & { type: string } };
    const woff = fontkit.create(read(file));
    const sfnt = fontkit.create(woffToSfnt(read(file)));
    expect(woff.type).toBe('WOFF');
    expect(sfnt.type).toBe('TTF');
    expect(sfnt.numGlyphs).toBe(woff.numGlyphs);
    expect(sfnt.postscriptName).toBe(woff.postscriptName);
    expect(sfnt.unitsPerEm).toBe(woff.unitsPerEm);
    const text = 'Strict success (healed), 12 months: 84% (81%-87%; 1,024 of 1,219) — Zoë’s “AVA” fi ffl Tooth 46';
    const a = woff.layout(text);
    const b = sfnt.layout(text);
    expect(b.glyphs.map((g) => g.id)).toEqual(a.glyphs.map((g) => g.id));
    expect(b.positions.map((p) => [p.xAdvance, p.xOffset])).toEqual(a.positions.map((p) => [p.xAdvance, p.xOffset]));
    expect(b.glyphs.map((g) => g.path.toSVG())).toEqual(a.glyphs.map((g) => g.path.toSVG()));
  });

  it('refuses what is not a WOFF 1.0 font', () => {
    expect(() => woffToSfnt(Buffer.from('not a font at all, only some words here to pass 44 bytes'))).toThrow(RangeError);
    const woff = read(FILES[0]!);
    expect(() => woffToSfnt(woff.subarray(0, 200))).toThrow(RangeError); // cut short: a table runs past the end
  });
});
