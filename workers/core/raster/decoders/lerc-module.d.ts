/** The part of the `lerc` package (3.x, pure JavaScript) the LERC decoder uses. */
declare module 'lerc' {
  interface LercBlock {
    width: number;
    height: number;
    pixels: Array<ArrayLike<number> & { buffer: ArrayBufferLike; byteOffset: number; byteLength: number }>;
    pixelType: string;
    /** 1 = valid, 0 = invalid, per pixel; null when every pixel is valid. */
    mask: Uint8Array | null;
  }
  const Lerc: {
    decode(input: ArrayBuffer, options?: { returnPixelInterleavedDims?: boolean }): LercBlock;
  };
  export default Lerc;
}
