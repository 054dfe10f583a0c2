import { readFileSync } from 'node:fs';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { sniffFilm } from '@/lib/films/sniff';

const fixture = (name: string) => new Uint8Array(readFileSync(path.join(import.meta.dirname, '../../support/films', name)));

describe('film type from content, not from the name', () => {
  it.each([
    ['radiograph.png', 'png'],
    ['radiograph.jpg', 'jpeg'],
    ['explicit-le.dcm', 'dicom'],
    ['jpeg2000.dcm', 'dicom'],
  ])('%s is %s', async (name, kind) => {
    expect((await sniffFilm(fixture(name))).kind).toBe(kind);
  });

  it('a PDF, a GIF, text and zeros are none of them (whatever they are called)', async () => {
    expect(await sniffFilm(new TextEncoder().encode('%PDF-1.7\n1 0 obj\n<< >>\nendobj\n'))).toEqual({ kind: null, detected: 'application/pdf' });
    expect(await sniffFilm(new Uint8Array([0x47, 0x49, 0x46, 0x38, 0x39, 0x61, 1, 0, 1, 0, 0, 0, 0]))).toEqual({ kind: null, detected: 'image/gif' });
    expect(await sniffFilm(new TextEncoder().encode('just text, renamed radiograph.png'))).toEqual({ kind: null, detected: null });
    expect(await sniffFilm(new Uint8Array(300))).toEqual({ kind: null, detected: null });
  });

  it('a DICOM file with its preamble cut off is not taken for DICOM', async () => {
    expect((await sniffFilm(fixture('explicit-le.dcm').subarray(128))).kind).toBeNull();
  });
});
