/**
 * TIFF predictors, undone in place on one decoded block.
 *
 * - 2, horizontal differencing: TIFF 6.0 (Adobe, 1992) section 14; each
 *   sample is stored as the difference to the same sample of the previous
 *   pixel, modulo the sample size.
 * - 3, floating point: Adobe Photoshop TIFF Technical Note 3 (2005); each row's
 *   bytes are split into planes, most significant byte first, and then
 *   byte-wise differenced. The result is in the host's (little-endian) order.
 */
import { CorruptBlockError } from './errors.js';

/**
 * Undo predictor 2 on samples already in host byte order.
 * @param data whole block (full block width x rows x samplesPerPixel)
 * @param bytesPerSample 1, 2, 4 or 8
 * @param rowSamples samples per row (block width x samples per pixel)
 * @param samplesPerPixel distance between the same sample of two neighbouring pixels
 * @param rows rows in the block
 */
export function undoHorizontal(
  data: Uint8Array,
  bytesPerSample: number,
  rowSamples: number,
  samplesPerPixel: number,
  rows: number,
): void {
  const s = samplesPerPixel;
  if (s === 1 && (bytesPerSample === 1 || bytesPerSample === 2) && data.byteOffset % bytesPerSample === 0) {
    // One sample per pixel (the usual LST band): a running sum per row in a
    // register, so no element is read back right after it was stored.
    const v = bytesPerSample === 2 ? new Uint16Array(data.buffer, data.byteOffset, rows * rowSamples) : data;
    const mask = bytesPerSample === 2 ? 0xffff : 0xff;
    for (let r = 0; r < rows; r++) {
      const o = r * rowSamples;
      let acc = v[o];
      for (let i = o + 1, end = o + rowSamples; i < end; i++) {
        acc = (acc + v[i]) & mask;
        v[i] = acc;
      }
    }
    return;
  }
  if (bytesPerSample === 1) {
    for (let r = 0; r < rows; r++) {
      const o = r * rowSamples;
      for (let i = o + s, end = o + rowSamples; i < end; i++) data[i] = (data[i] + data[i - s]) & 0xff;
    }
  } else if (bytesPerSample === 2) {
    const v = new Uint16Array(data.buffer, data.byteOffset, rows * rowSamples);
    for (let r = 0; r < rows; r++) {
      const o = r * rowSamples;
      for (let i = o + s, end = o + rowSamples; i < end; i++) v[i] = v[i] + v[i - s];
    }
  } else if (bytesPerSample === 4) {
    const v = new Uint32Array(data.buffer, data.byteOffset, rows * rowSamples);
    for (let r = 0; r < rows; r++) {
      const o = r * rowSamples;
      for (let i = o + s, end = o + rowSamples; i < end; i++) v[i] = v[i] + v[i - s];
    }
  } else if (bytesPerSample === 8) {
    const v = new BigUint64Array(data.buffer, data.byteOffset, rows * rowSamples);
    for (let r = 0; r < rows; r++) {
      const o = r * rowSamples;
      for (let i = o + s, end = o + rowSamples; i < end; i++) v[i] = BigInt.asUintN(64, v[i] + v[i - s]);
    }
  } else {
    throw new CorruptBlockError(`predictor 2 is undefined for ${bytesPerSample * 8}-bit samples`);
  }
}

let scratch = new Uint8Array(0);

/**
 * Undo predictor 3 (floating point).
 * @param data whole block, as decompressed
 * @param bytesPerSample 2, 4 or 8
 * @param rowSamples samples per row (block width x samples per pixel)
 * @param samplesPerPixel samples interleaved per pixel
 * @param rows rows in the block
 */
export function undoFloatingPoint(
  data: Uint8Array,
  bytesPerSample: number,
  rowSamples: number,
  samplesPerPixel: number,
  rows: number,
): void {
  if (bytesPerSample !== 2 && bytesPerSample !== 4 && bytesPerSample !== 8) {
    throw new CorruptBlockError(`predictor 3 is undefined for ${bytesPerSample * 8}-bit samples`);
  }
  const rowBytes = rowSamples * bytesPerSample;
  if (scratch.length < rowBytes) scratch = new Uint8Array(rowBytes);
  const tmp = scratch;
  const s = samplesPerPixel;
  const b = bytesPerSample;
  for (let r = 0; r < rows; r++) {
    const o = r * rowBytes;
    for (let i = o + s, end = o + rowBytes; i < end; i++) data[i] = (data[i] + data[i - s]) & 0xff;
    tmp.set(data.subarray(o, o + rowBytes));
    // Plane k holds byte (b-1-k) of each sample, little-endian numbering.
    for (let i = 0; i < rowSamples; i++) {
      const d = o + i * b;
      for (let k = 0; k < b; k++) data[d + k] = tmp[(b - 1 - k) * rowSamples + i];
    }
  }
}

/** Reverse the byte order of every sample in place (big-endian file to host order). */
export function swapBytes(data: Uint8Array, bytesPerSample: number): void {
  const n = data.length - (data.length % bytesPerSample);
  if (bytesPerSample === 2) {
    for (let i = 0; i < n; i += 2) { const t = data[i]; data[i] = data[i + 1]; data[i + 1] = t; }
  } else if (bytesPerSample === 4) {
    for (let i = 0; i < n; i += 4) {
      let t = data[i]; data[i] = data[i + 3]; data[i + 3] = t;
      t = data[i + 1]; data[i + 1] = data[i + 2]; data[i + 2] = t;
    }
  } else if (bytesPerSample === 8) {
    for (let i = 0; i < n; i += 8) {
      for (let k = 0; k < 4; k++) { const t = data[i + k]; data[i + k] = data[i + 7 - k]; data[i + 7 - k] = t; }
    }
  }
}
