/**
 * Validity masks stored with a GeoTIFF besides nodata, read the way GDAL
 * applies them (F. Warmerdam, GDAL RFC 15 "Band Masks", adopted 2007: masks
 * are 8-bit, zero marks a pixel as nodata and any non-zero value as valid,
 * 255 being the usual valid value; a 1-bit mask's 1 reads as 255).
 *
 * - Internal mask: an image directory after the full-resolution image with
 *   NewSubfileType bit 2 ("transparency mask", value 4) and without bit 0
 *   (reduced resolution), PhotometricInterpretation 4 (transparency mask),
 *   1 or 8 bits per sample (TIFF 6.0 sections 8 and 16). GDAL writes one with
 *   GDAL_TIFF_INTERNAL_MASK and the COG driver writes one per level; only the
 *   full-resolution one is used (overviews and their masks are skipped).
 *   One sample = one mask for every band; as many samples as bands = one per band.
 * - External mask: `scene.tif.msk` beside the raster (RFC 15), used when the
 *   file has no internal mask, as GDAL does; its first image is the mask.
 * - Alpha band: ExtraSamples 1 (associated alpha) or 2 (unassociated alpha)
 *   (TIFF 6.0 section 18). GDAL uses an 8-bit alpha as the mask and rescales
 *   a 16-bit one to 8 bits keeping every non-zero value non-zero, so in both
 *   cases alpha 0 is invalid and any other value valid (checked with rasterio's
 *   read_masks). GDAL uses alpha only as the 2nd of 2 or the 4th of 4 bands
 *   and only of those two sample types; here alpha of any type, in any band
 *   count, gets the same rule (where GDAL would ignore it and count every
 *   pixel valid, which for a temperature band is a silently wrong mean).
 */
import { open, type FileHandle } from 'node:fs/promises';
import { InputError } from '../errors.js';
import { intersectWindows, type Window } from './affine.js';
import { CorruptBlockError, decoderFor, unsupportedCompression } from './decoders/index.js';
import { undoHorizontal } from './decoders/predictor.js';
import { readBlockGeometry, TAG, type BlockGeometry } from './blocks.js';
import { followingDirectories, readExactlySync, readFirstDirectory, readNumbers, readScalar, type TiffDirectory } from './tiff.js';

/** NewSubfileType bits (TIFF 6.0 section 8). */
const REDUCED_RESOLUTION = 1, TRANSPARENCY_MASK = 4;
/** PhotometricInterpretation 4: transparency mask (TIFF 6.0 section 16). */
const PHOTOMETRIC_MASK = 4;
/** FillOrder tag (TIFF 6.0 section 8): 1 = most significant bit first, 2 = least. */
const FILL_ORDER = 266;

export interface MaskLayout {
  readonly littleEndian: boolean;
  readonly compression: number;
  readonly predictor: number;
  readonly bits: 1 | 8;
  /** 1 (one mask for every band) or the number of bands (one mask each). */
  readonly samples: number;
  readonly planar: 1 | 2;
  readonly lsbFirst: boolean;
  readonly geometry: BlockGeometry;
}

/**
 * The 0-based band holding alpha, from the ExtraSamples values (the extra
 * samples are the last `extra.length` bands), or null.
 */
export function alphaBandOf(extra: number[] | null, bands: number, path: string): number | null {
  if (extra === null) return null;
  if (extra.length >= bands) {
    throw new InputError(`ExtraSamples lists ${extra.length} extra samples but the image has only ${bands} band(s)`, path);
  }
  const i = extra.findIndex((v) => v === 1 || v === 2);
  return i < 0 ? null : bands - extra.length + i;
}

/**
 * Find the internal transparency mask of the full-resolution image among the
 * image directories after the first, or null when there is none.
 * @throws InputError for a mask directory this reader cannot apply (so that it is never dropped without a word)
 */
export async function findInternalMask(
  fh: FileHandle, first: TiffDirectory, path: string, image: { width: number; height: number; bands: number },
  warnings: string[],
): Promise<MaskLayout | null> {
  if (first.nextOffset === 0) return null;
  const chain = followingDirectories(fh, path, first)[Symbol.asyncIterator]();
  for (;;) {
    let step: IteratorResult<TiffDirectory>;
    try {
      step = await chain.next();
    } catch (e) {
      // The image itself is readable; a broken link after it (some writers leave a
      // stray next-directory offset) costs only what may lie beyond: say so.
      if (!(e instanceof InputError)) throw e;
      warnings.push(`${path}: the image directories after the first could not be read (${e.message.replace(`${path}: `, '')}); a mask stored there, if any, was not applied`);
      return null;
    }
    if (step.done) return null;
    const dir = step.value;
    const type = (await readScalar(fh, dir, path, TAG.NewSubfileType, 'NewSubfileType')) ?? 0;
    if ((type & TRANSPARENCY_MASK) === 0 || (type & REDUCED_RESOLUTION) !== 0) continue;
    const photometric = await readScalar(fh, dir, path, TAG.PhotometricInterpretation, 'PhotometricInterpretation');
    if (photometric !== PHOTOMETRIC_MASK) continue; // not a transparency mask: GDAL passes over it too
    const width = await readScalar(fh, dir, path, TAG.ImageWidth, 'ImageWidth');
    const height = await readScalar(fh, dir, path, TAG.ImageLength, 'ImageLength');
    if (width !== image.width || height !== image.height) continue; // a mask of some other image
    return maskLayoutOf(fh, dir, path, image, 'internal mask: ');
  }
}

/**
 * The external mask GDAL keeps beside a raster when it cannot write one into
 * the file (`scene.tif.msk`, a TIFF whose first image is the mask, one band
 * per dataset or one per band), or null when there is none.
 * @returns the open mask file (the caller closes it) and its layout
 * @throws InputError naming the mask file when it cannot be applied
 */
export async function findExternalMask(
  rasterPath: string, image: { width: number; height: number; bands: number },
): Promise<{ fh: FileHandle; path: string; layout: MaskLayout } | null> {
  const path = `${rasterPath}.msk`;
  let fh: FileHandle;
  try {
    fh = await open(path, 'r');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ENOENT' || code === 'ENOTDIR') return null;
    throw new InputError(`cannot open the mask file (${code ?? (e as Error).message})`, path);
  }
  try {
    const dir = await readFirstDirectory(fh, path);
    const width = await readScalar(fh, dir, path, TAG.ImageWidth, 'ImageWidth');
    const height = await readScalar(fh, dir, path, TAG.ImageLength, 'ImageLength');
    if (width !== image.width || height !== image.height) {
      throw new InputError(`mask is ${width} x ${height} pixels but ${rasterPath} is ${image.width} x ${image.height}`, path);
    }
    return { fh, path, layout: await maskLayoutOf(fh, dir, path, image, 'mask file: ') };
  } catch (e) {
    await fh.close();
    throw e;
  }
}

/** Check a mask image directory and read its block layout. */
async function maskLayoutOf(
  fh: FileHandle, dir: TiffDirectory, path: string, image: { width: number; height: number; bands: number }, what: string,
): Promise<MaskLayout> {
  const { width, height } = image;
  const samples = (await readScalar(fh, dir, path, TAG.SamplesPerPixel, 'SamplesPerPixel')) ?? 1;
  if (samples !== 1 && samples !== image.bands) {
    throw new InputError(`${what}${samples} samples per pixel, but a mask has 1 or one per band (${image.bands})`, path);
  }
  const bitsList = (await readNumbers(fh, dir, path, TAG.BitsPerSample, 'BitsPerSample', samples)) ?? [1];
  const bits = bitsList[0];
  if ((bits !== 1 && bits !== 8) || bitsList.some((b) => b !== bits)) {
    throw new InputError(`${what}${bitsList.join('/')} bits per sample are not supported (masks have 1 or 8)`, path);
  }
  const format = (await readScalar(fh, dir, path, TAG.SampleFormat, 'SampleFormat')) ?? 1;
  if (format !== 1) throw new InputError(`${what}sample format ${format} is not unsigned integer`, path);
  const compression = (await readScalar(fh, dir, path, TAG.Compression, 'Compression')) ?? 1;
  if (!decoderFor(compression)) throw new InputError(`${what}${unsupportedCompression(compression)}`, path);
  const predictor = (await readScalar(fh, dir, path, TAG.Predictor, 'Predictor')) ?? 1;
  if (predictor !== 1 && !(predictor === 2 && bits === 8)) {
    throw new InputError(`${what}predictor ${predictor} with ${bits}-bit samples is not supported`, path);
  }
  const fill = (await readScalar(fh, dir, path, FILL_ORDER, 'FillOrder')) ?? 1;
  if (fill !== 1 && fill !== 2) throw new InputError(`${what}FillOrder ${fill} is invalid`, path);
  const planarCode = (await readScalar(fh, dir, path, TAG.PlanarConfiguration, 'PlanarConfiguration')) ?? 1;
  if (planarCode !== 1 && planarCode !== 2) throw new InputError(`${what}PlanarConfiguration ${planarCode} is invalid`, path);
  const planar: 1 | 2 = samples === 1 ? 1 : planarCode;
  const geometry = await readBlockGeometry(fh, dir, path, {
    width, height, bitsPerBlockPixel: (planar === 1 ? samples : 1) * bits, planes: planar === 2 ? samples : 1,
  }, what);
  return { littleEndian: dir.littleEndian, compression, predictor, bits, samples, planar, lsbFirst: fill === 2, geometry };
}

/** Reverse the bit order of every byte (FillOrder 2). */
function reverseBits(x: Uint8Array): void {
  for (let i = 0; i < x.length; i++) {
    let b = x[i];
    b = ((b & 0xf0) >> 4) | ((b & 0x0f) << 4);
    b = ((b & 0xcc) >> 2) | ((b & 0x33) << 2);
    x[i] = ((b & 0xaa) >> 1) | ((b & 0x55) << 1);
  }
}

/** Reads an internal mask block by block and clears the invalid pixels of a window. */
export class InternalMaskReader {
  /** The last block decoded (image blocks and mask blocks need not line up, e.g. strips of other heights). */
  private lastIndex = -1;
  private lastBlock: Uint8Array | null = null;

  constructor(
    private readonly fd: () => number,
    private readonly path: string,
    private readonly layout: MaskLayout,
    private readonly width: number,
    private readonly height: number,
  ) {}

  /**
   * Set out[i] = 0 for every pixel of `window` (already inside the image) the
   * mask marks invalid; other entries are left as they are.
   * @param band 0-based band (used when there is one mask per band)
   */
  async clearInvalid(window: Window, band: number, out: Uint8Array): Promise<void> {
    const L = this.layout, g = L.geometry;
    const bw = g.blockWidth, bh = g.blockHeight;
    const chunky = L.planar === 1 ? L.samples : 1;
    const sample = L.samples === 1 ? 0 : band;
    const plane = L.planar === 2 ? sample : 0;
    const inRow = L.planar === 1 ? sample : 0;
    const rowBytes = Math.ceil((bw * chunky * L.bits) / 8);
    const c0 = Math.floor(window.colOff / bw), c1 = Math.floor((window.colOff + window.width - 1) / bw);
    const r0 = Math.floor(window.rowOff / bh), r1 = Math.floor((window.rowOff + window.height - 1) / bh);
    for (let br = r0; br <= r1; br++) {
      for (let bc = c0; bc <= c1; bc++) {
        const place: Window = { colOff: bc * bw, rowOff: br * bh, width: Math.min(bw, this.width - bc * bw), height: Math.min(bh, this.height - br * bh) };
        const part = intersectWindows(place, window);
        if (part === null) continue;
        const index = plane * g.blocksPerBand + br * g.blocksAcross + bc;
        const storedRows = g.tiled ? bh : place.height;
        if (index !== this.lastIndex) {
          this.lastBlock = await this.block(index, rowBytes, storedRows, bh);
          this.lastIndex = index;
        }
        const raw = this.lastBlock;
        for (let r = part.rowOff; r < part.rowOff + part.height; r++) {
          const rowAt = (r - place.rowOff) * rowBytes;
          const outAt = (r - window.rowOff) * window.width - window.colOff;
          for (let c = part.colOff; c < part.colOff + part.width; c++) {
            const s = (c - place.colOff) * chunky + inRow;
            let v: number;
            if (raw === null) v = 0;
            else if (L.bits === 8) v = raw[rowAt + s];
            else v = (raw[rowAt + (s >> 3)] >> (7 - (s & 7))) & 1;
            if (v === 0) out[outAt + c] = 0;
          }
        }
      }
    }
  }

  /** Decoded bytes of mask block `index` (rows of `rowBytes`), or null for a sparse block (all invalid, as GDAL reads a missing block as 0). */
  private async block(index: number, rowBytes: number, storedRows: number, fullRows: number): Promise<Uint8Array | null> {
    const L = this.layout, g = L.geometry;
    const offset = g.offsets[index], count = g.byteCounts[index];
    if (offset === 0 && count === 0) return null;
    const where = `internal mask ${g.tiled ? 'tile' : 'strip'} ${index}`;
    const need = rowBytes * storedRows;
    const stored = readExactlySync(this.fd(), this.path, offset, count, where);
    let raw: Uint8Array;
    try {
      raw = L.compression === 1 ? stored : await decoderFor(L.compression)!(stored, rowBytes * fullRows);
    } catch (e) {
      if (e instanceof CorruptBlockError) throw new InputError(`${where} is corrupt: ${e.message}`, this.path);
      throw e;
    }
    if (raw.length < need) {
      throw new InputError(`${where} decodes to ${raw.length} bytes but its ${storedRows} rows need ${need}`, this.path);
    }
    if (L.compression === 1) raw = raw.slice(0, need);
    if (L.lsbFirst) reverseBits(raw);
    if (L.predictor === 2) {
      try {
        undoHorizontal(raw, 1, rowBytes, L.planar === 1 ? L.samples : 1, storedRows);
      } catch (e) {
        if (e instanceof CorruptBlockError) throw new InputError(`${where}: ${e.message}`, this.path);
        throw e;
      }
    }
    return raw;
  }
}
