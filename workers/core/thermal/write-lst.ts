/**
 * `--write-lst`: the LST derived from a thermal scene as a cloud-optimised
 * GeoTIFF for the user's own GIS: float32 Kelvin, nodata NaN, 256 x 256 tiles
 * with the directory before the tile data (the layout GDAL's COG validator
 * checks), GDAL metadata saying how the LST was made.
 */
import type { RasterFile } from '../raster/index.js';
import { writeGeoTiff } from '../raster/write.js';
import { InputError } from '../errors.js';
import { thermalLstRaster, type ThermalLstPlan } from './lst-raster.js';

/**
 * Write the LST of a thermal DN scene (same grid) to `outPath`.
 * @param metadata GDAL metadata items to add (e.g. LST_METHOD, EMISSIVITY_SOURCE)
 * @throws InputError naming the scene when it has no EPSG code (the writer needs one)
 */
export async function writeThermalLst(dn: RasterFile, plan: ThermalLstPlan, outPath: string, metadata: Record<string, string>): Promise<void> {
  const h = dn.header;
  if (h.epsg === null) throw new InputError('has no EPSG code, so its LST cannot be written as a GeoTIFF (--write-lst)', h.path);
  const lst = thermalLstRaster(dn, plan);
  const data = (await lst.readWindow({ colOff: 0, rowOff: 0, width: h.width, height: h.height })) as Float32Array;
  await writeGeoTiff(outPath, {
    width: h.width,
    height: h.height,
    data,
    transform: h.transform,
    epsg: h.epsg,
    nodata: NaN,
    metadata: { KIND: 'lst', UNITS: 'K', ...metadata },
    layout: { tiled: true, tileWidth: 256, tileHeight: 256 },
    compression: 'deflate',
    predictor: 3,
  }).catch((e: unknown) => {
    if (e instanceof InputError) throw e;
    throw new InputError(`cannot write the derived LST (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`, outPath);
  });
}
