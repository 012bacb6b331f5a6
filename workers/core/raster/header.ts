/**
 * RasterHeader and block layout of a GeoTIFF, from its first image directory,
 * without reading any pixel. All size checks happen here, before the reader
 * allocates anything for pixels.
 */
import type { FileHandle } from 'node:fs/promises';
import { crsDefinitionForEpsg } from '../crs/index.js';
import { InputError, isInputError } from '../errors.js';
import type { Epsg } from '../units.js';
import type { Affine } from './affine.js';
import { acquisitionTime } from './acqtime.js';
import { decoderFor, unsupportedCompression } from './decoders/index.js';
import { parseGdalMetadata, parseNodata } from './gdalmeta.js';
import { crsDefinitionOf, epsgOf, geotransform, isPixelIsPoint, parseGeoKeys, type GeoKeyValue } from './geokeys.js';
import { alphaBandOf, findExternalMask, findInternalMask, type MaskLayout } from './mask.js';
import { readSidecar } from './sidecar.js';
import { readBlockGeometry, TAG } from './blocks.js';
import { readAscii, readFirstDirectory, readNumbers, readScalar, type TiffDirectory } from './tiff.js';

/** Largest image we read, in pixels per band (the reader's and its callers' indices stay int32). */
export const MAX_PIXELS = 2 ** 31;
export interface RasterHeader {
  path: string;
  width: number;
  height: number;
  bands: number;
  sampleFormat: 'uint' | 'int' | 'float';
  bitsPerSample: number;
  /** Pixel-is-area corner convention (pixel-is-point shifted by half a pixel). */
  transform: Affine;
  /** From GeoKeys; null for a user-defined CRS or none. */
  epsg: Epsg | null;
  /** proj4 definition (also for user-defined CRSs); null = no CRS. */
  crsDefinition: string | null;
  /** GDAL_NODATA tag, or the `.aux.xml` sidecar's band-1 <NoDataValue>, which overrides it as in GDAL; NaN for "nan". */
  nodata: number | null;
  /**
   * Physical value = DN * scale + offset: GDAL metadata of the TIFF, else the
   * `.aux.xml` sidecar (GDAL keeps the TIFF's when both have one); default 1 / 0.
   */
  scale: number;
  offset: number;
  /** UTC "YYYY-MM-DDTHH:MM:SSZ". */
  acquiredAt: string | null;
  /** GDAL metadata items (dataset level, default domain), sidecar items overriding the TIFF's. */
  metadata: Record<string, string>;
  /**
   * Which pixels a mask marks invalid besides nodata: 'internal' = a
   * transparency-mask image directory of the full-resolution image (GDAL
   * internal mask, COG mask); 'external' = a `.msk` mask file beside the raster;
   * 'alpha' = an alpha band (`alphaBand`); a mask and alpha may both be
   * present; null = none. RasterFile.validMask reads it.
   */
  mask: 'internal' | 'external' | 'alpha' | 'internal+alpha' | 'external+alpha' | null;
  /** 0-based band holding alpha (ExtraSamples 1 or 2), or null. */
  alphaBand: number | null;
  /** Problems found while reading that did not stop the raster from being used, each naming the file. */
  warnings: string[];
  blockWidth: number;
  blockHeight: number;
  tiled: boolean;
  compression: number;
  predictor: number;
}

/** Where each block's bytes are and how to decode them (reader internals). */
export interface BlockLayout {
  readonly littleEndian: boolean;
  readonly samplesPerPixel: number;
  readonly planar: 1 | 2;
  readonly bytesPerSample: number;
  readonly blocksAcross: number;
  readonly blocksDown: number;
  readonly blocksPerBand: number;
  readonly offsets: Float64Array;
  readonly byteCounts: Float64Array;
  readonly fileSize: number;
}

export interface ParsedRaster {
  readonly header: RasterHeader;
  readonly layout: BlockLayout;
  /** Block layout of the internal transparency mask or of the external mask file, or null. */
  readonly maskLayout: MaskLayout | null;
  /** The external mask file (`.msk`) when the mask is there: open (the reader closes it). */
  readonly maskFile: { fh: FileHandle; path: string } | null;
}

const SAMPLE_FORMATS: Record<number, RasterHeader['sampleFormat']> = { 1: 'uint', 2: 'int', 3: 'float' };

function uniform(values: number[], name: string, path: string): number {
  const v = values[0];
  for (const x of values) if (x !== v) throw new InputError(`${name} differs between bands (${values.join(', ')}), which is not supported`, path);
  return v;
}

type Scalar = (tag: number, name: string) => Promise<number | null>;

/** Step 1: image size in pixels and samples per pixel, checked before anything is allocated. */
async function readImageSize(scalar: Scalar, path: string): Promise<{ width: number; height: number; spp: number }> {
  const width = await scalar(TAG.ImageWidth, 'ImageWidth');
  const height = await scalar(TAG.ImageLength, 'ImageLength');
  if (width === null || height === null) throw new InputError('TIFF image has no ImageWidth/ImageLength tag', path);
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1) {
    throw new InputError(`image size ${width} x ${height} is not a positive whole number of pixels`, path);
  }
  if (width * height > MAX_PIXELS) {
    throw new InputError(`image size ${width} x ${height} exceeds the ${MAX_PIXELS} pixels this reader accepts`, path);
  }
  const spp = (await scalar(TAG.SamplesPerPixel, 'SamplesPerPixel')) ?? 1;
  if (!Number.isInteger(spp) || spp < 1 || spp > 4096) throw new InputError(`SamplesPerPixel ${spp} is implausible`, path);
  return { width, height, spp };
}

/** Step 2: the sample type (one for all bands), among those the decoders support. */
async function readSampleType(fh: FileHandle, dir: TiffDirectory, path: string, spp: number): Promise<{ bits: number; sampleFormat: RasterHeader['sampleFormat'] }> {
  const bitsList = (await readNumbers(fh, dir, path, TAG.BitsPerSample, 'BitsPerSample', spp)) ?? [1];
  const bits = uniform(bitsList, 'BitsPerSample', path);
  const fmtList = (await readNumbers(fh, dir, path, TAG.SampleFormat, 'SampleFormat', spp)) ?? [1];
  const fmtCode = uniform(fmtList, 'SampleFormat', path);
  const sampleFormat = SAMPLE_FORMATS[fmtCode];
  const supported =
    (sampleFormat === 'uint' || sampleFormat === 'int') ? [8, 16, 32].includes(bits) :
    sampleFormat === 'float' ? [32, 64].includes(bits) : false;
  if (!sampleFormat || !supported) {
    throw new InputError(`sample format ${sampleFormat ?? `code ${fmtCode}`} with ${bits} bits per sample is not supported`, path);
  }
  return { bits, sampleFormat };
}

/** Step 3: compression, predictor and planar configuration, checked against each other. */
async function readEncoding(
  scalar: Scalar, dir: TiffDirectory, path: string, spp: number, sampleFormat: RasterHeader['sampleFormat'],
): Promise<{ compression: number; predictor: number; planar: 1 | 2 }> {
  const compression = (await scalar(TAG.Compression, 'Compression')) ?? 1;
  if (!decoderFor(compression)) throw new InputError(unsupportedCompression(compression), path);
  const predictor = (await scalar(TAG.Predictor, 'Predictor')) ?? 1;
  if (predictor !== 1 && predictor !== 2 && predictor !== 3) throw new InputError(`predictor ${predictor} is not supported`, path);
  if (predictor === 3 && sampleFormat !== 'float') throw new InputError('predictor 3 (floating point) on integer samples is invalid', path);
  const planarCode = (await scalar(TAG.PlanarConfiguration, 'PlanarConfiguration')) ?? 1;
  if (planarCode !== 1 && planarCode !== 2) throw new InputError(`PlanarConfiguration ${planarCode} is invalid`, path);
  const planar: 1 | 2 = spp === 1 ? 1 : planarCode;

  if (compression === 34887) {
    // The LERC decoder hands out samples in the machine's (little-endian) order and
    // GDAL writes LERC without a predictor; anything else is not a file GDAL makes.
    if (!dir.littleEndian) throw new InputError('LERC compression in a big-endian TIFF is not supported', path);
    if (predictor !== 1) throw new InputError(`LERC compression with predictor ${predictor} is not supported`, path);
  }
  return { compression, predictor, planar };
}

/** Step 4: GeoKeys and the pixel-to-map transform. */
async function readGeoreferencing(fh: FileHandle, dir: TiffDirectory, path: string): Promise<{ keys: Map<number, GeoKeyValue> | null; transform: Affine }> {
  let keys: Map<number, GeoKeyValue> | null = null;
  const keyDir = await readNumbers(fh, dir, path, TAG.GeoKeyDirectory, 'GeoKeyDirectory', 4 + 4 * 4096);
  if (keyDir) {
    const doubles = await readNumbers(fh, dir, path, TAG.GeoDoubleParams, 'GeoDoubleParams', 65536);
    const ascii = await readAscii(fh, dir, path, TAG.GeoAsciiParams, 'GeoAsciiParams');
    keys = parseGeoKeys(keyDir, doubles, ascii, path);
  }
  const transform = geotransform(
    await readNumbers(fh, dir, path, TAG.ModelTransformation, 'ModelTransformation', 16),
    await readNumbers(fh, dir, path, TAG.ModelTiepoint, 'ModelTiepoint', 6 * 65536),
    await readNumbers(fh, dir, path, TAG.ModelPixelScale, 'ModelPixelScale', 3),
    isPixelIsPoint(keys),
    path,
  );
  return { keys, transform };
}

/**
 * Step 5: GDAL metadata and nodata, then the .aux.xml sidecar. GDAL 3.6 (checked with
 * rasterio on files holding both): the sidecar's nodata and metadata items
 * override the TIFF's; the TIFF's scale/offset win over the sidecar's.
 * Warnings about corrupt metadata are added to `warnings`.
 */
async function readMetadata(
  fh: FileHandle, dir: TiffDirectory, path: string, warnings: string[],
): Promise<Pick<RasterHeader, 'metadata' | 'nodata' | 'scale' | 'offset'> & { tiffDateTime: string | null }> {
  const xml = await readAscii(fh, dir, path, TAG.GdalMetadata, 'GDAL_METADATA');
  const meta = xml === null ? { dataset: {}, scale: null, offset: null, warning: null } : parseGdalMetadata(xml, path);
  if (meta.warning !== null) warnings.push(`${path}: ${meta.warning}`);
  const nodataText = await readAscii(fh, dir, path, TAG.GdalNodata, 'GDAL_NODATA');
  const tiffDateTime = await readAscii(fh, dir, path, TAG.DateTime, 'DateTime');
  const pam = await readSidecar(path);
  warnings.push(...pam.warnings);
  const side = pam.sidecar;
  const metadata = side ? { ...meta.dataset, ...side.metadata } : meta.dataset;
  const tiffNodata = nodataText === null ? null : parseNodata(nodataText, path);
  return {
    metadata,
    nodata: side?.nodata ?? tiffNodata,
    scale: meta.scale ?? side?.scale ?? 1,
    offset: meta.offset ?? side?.offset ?? 0,
    tiffDateTime,
  };
}

/** How the header names the masks it found: internal or external mask, alpha band, both, or none. */
function maskKind(maskSource: 'internal' | 'external' | null, alphaBand: number | null): RasterHeader['mask'] {
  return (maskSource && alphaBand !== null ? `${maskSource}+alpha` : maskSource ?? (alphaBand !== null ? 'alpha' : null)) as RasterHeader['mask'];
}

/**
 * Read the header and block layout of the first image of an open TIFF, in
 * steps: size, sample type, encoding, block geometry, georeferencing,
 * metadata, masks.
 * @param fh open file (the caller closes it)
 * @param path file path, for messages
 */
export async function readRasterHeader(fh: FileHandle, path: string): Promise<ParsedRaster> {
  const dir: TiffDirectory = await readFirstDirectory(fh, path);
  const scalar: Scalar = (tag, name) => readScalar(fh, dir, path, tag, name);

  const { width, height, spp } = await readImageSize(scalar, path);
  const { bits, sampleFormat } = await readSampleType(fh, dir, path, spp);
  const { compression, predictor, planar } = await readEncoding(scalar, dir, path, spp, sampleFormat);
  const samplesPerBlockPixel = planar === 1 ? spp : 1;
  const geometry = await readBlockGeometry(fh, dir, path, { width, height, bitsPerBlockPixel: samplesPerBlockPixel * bits, planes: planar === 2 ? spp : 1 });
  const { tiled, blockWidth, blockHeight, blocksAcross, blocksDown, blocksPerBand, offsets, byteCounts } = geometry;
  const { keys, transform } = await readGeoreferencing(fh, dir, path);
  const warnings: string[] = [];
  const { metadata, nodata, scale, offset, tiffDateTime } = await readMetadata(fh, dir, path, warnings);

  // Masks: an internal transparency mask of the full-resolution image, an alpha band.
  const extra = await readNumbers(fh, dir, path, TAG.ExtraSamples, 'ExtraSamples', spp);
  const alphaBand = alphaBandOf(extra, spp, path);
  const internal = await findInternalMask(fh, dir, path, { width, height, bands: spp }, warnings);

  const epsg = epsgOf(keys);
  const crsDefinition = epsg !== null ? projectDefinition(epsg, path) : crsDefinitionOf(keys, path);
  const acquiredAt = acquisitionTime(metadata, tiffDateTime, path);
  // Last, as it opens a file the reader must close: GDAL looks for scene.tif.msk
  // only when the file has no mask of its own.
  const external = internal === null ? await findExternalMask(path, { width, height, bands: spp }) : null;
  const maskLayout = internal ?? external?.layout ?? null;
  const header: RasterHeader = {
    path, width, height, bands: spp, sampleFormat, bitsPerSample: bits, transform, epsg, crsDefinition,
    nodata, scale, offset, acquiredAt, metadata,
    blockWidth, blockHeight, tiled, compression, predictor,
    mask: maskKind(internal ? 'internal' : external ? 'external' : null, alphaBand),
    alphaBand,
    warnings,
  };
  const layout: BlockLayout = {
    littleEndian: dir.littleEndian,
    samplesPerPixel: spp,
    planar,
    bytesPerSample: bits / 8,
    blocksAcross,
    blocksDown,
    blocksPerBand,
    offsets,
    byteCounts,
    fileSize: dir.fileSize,
  };
  return { header, layout, maskLayout, maskFile: external ? { fh: external.fh, path: external.path } : null };
}

/**
 * The project's definition for an EPSG code (workers/core/crs: easting-first
 * axes and a datum shift to WGS 84). A code it has no definition for is an
 * InputError naming the file and the code: reading the raster with some other
 * guess (the GeoKeys library falls back to lon/lat for codes it does not know)
 * would put every pixel in the wrong place without a word.
 */
function projectDefinition(epsg: Epsg, path: string): string {
  try {
    return crsDefinitionForEpsg(epsg);
  } catch (e) {
    if (isInputError(e)) throw new InputError(e.message, path);
    throw e;
  }
}
