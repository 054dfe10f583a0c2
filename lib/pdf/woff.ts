import { inflateSync } from 'node:zlib';

/**
 * A WOFF 1.0 font (W3C WOFF File Format 1.0, 2012) unpacked into the plain sfnt (TrueType/OpenType)
 * font it wraps: the same tables, byte for byte, each inflated once.
 *
 * Why: the PDF writer's font library (fontkit 2, under @react-pdf/renderer) reads a WOFF's tables
 * compressed and inflates the whole `glyf` table again for EVERY glyph it copies into a document's
 * subset (WOFFFont._getTableStream): about a third of the outcomes report's drawing time. The
 * unpacked font gives the same glyphs, metrics and subset, so the same PDF.
 *
 * Layout: a 44-byte header ('wOFF', the sfnt flavour, …, numTables at 12) and a table directory of
 * 20-byte entries (tag, offset, compLength, origLength, origChecksum) sorted by tag; a table is
 * zlib-compressed when compLength < origLength. The sfnt has a 12-byte offset table, 16-byte table
 * records (tag, checksum, offset, length) in the same order, and each table 4-byte aligned.
 */
export function woffToSfnt(woff: Uint8Array): Buffer {
  const src = Buffer.from(woff.buffer, woff.byteOffset, woff.byteLength);
  if (src.length < 44 || src.toString('latin1', 0, 4) !== 'wOFF') throw new RangeError('Not a WOFF 1.0 font');
  const flavor = src.readUInt32BE(4);
  const numTables = src.readUInt16BE(12);
  if (44 + numTables * 20 > src.length) throw new RangeError('WOFF table directory runs past the end of the file');
  const tables: { tag: number; checksum: number; data: Buffer }[] = [];
  for (let i = 0; i < numTables; i++) {
    const e = 44 + i * 20;
    const tag = src.readUInt32BE(e);
    const offset = src.readUInt32BE(e + 4);
    const compLength = src.readUInt32BE(e + 8);
    const origLength = src.readUInt32BE(e + 12);
    const checksum = src.readUInt32BE(e + 16);
    if (offset + compLength > src.length) throw new RangeError('WOFF table runs past the end of the file');
    const raw = src.subarray(offset, offset + compLength);
    const data = compLength < origLength ? inflateSync(raw) : raw;
    if (data.length !== origLength) throw new RangeError('WOFF table inflates to the wrong length');
    tables.push({ tag, checksum, data });
  }
  const pad4 = (n: number) => (n + 3) & ~3;
  const headerLength = 12 + numTables * 16;
  const out = Buffer.alloc(headerLength + tables.reduce((s, t) => s + pad4(t.data.length), 0));
  let pow2 = 1;
  let log2 = 0;
  while (pow2 * 2 <= numTables) {
    pow2 *= 2;
    log2 += 1;
  }
  out.writeUInt32BE(flavor, 0);
  out.writeUInt16BE(numTables, 4);
  out.writeUInt16BE(pow2 * 16, 6); // searchRange
  out.writeUInt16BE(log2, 8); // entrySelector
  out.writeUInt16BE(numTables * 16 - pow2 * 16, 10); // rangeShift
  let offset = headerLength;
  tables.forEach((t, i) => {
    const r = 12 + i * 16;
    out.writeUInt32BE(t.tag, r);
    out.writeUInt32BE(t.checksum, r + 4);
    out.writeUInt32BE(offset, r + 8);
    out.writeUInt32BE(t.data.length, r + 12);
    t.data.copy(out, offset);
    offset += pad4(t.data.length);
  });
  return out;
}
