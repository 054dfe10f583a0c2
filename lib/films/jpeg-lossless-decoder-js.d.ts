/** The package ships no types; the one call Lamina makes (lib/films/dicom.ts). */
declare module 'jpeg-lossless-decoder-js' {
  export class Decoder {
    constructor(buffer?: ArrayBuffer, numBytes?: number);
    /** Decodes one JPEG Lossless (process 14) frame; 8-bit samples as Uint8Array, wider ones as Uint16Array. */
    decode(buffer: ArrayBuffer, offset: number, length: number, numBytes?: number): Uint8Array | Uint16Array;
  }
}
