/**
 * EPSG code -> proj4 definition string, offline.
 *
 * Sources, in order:
 * 1. proj4's own definitions for WGS 84 (4326), Web Mercator (3857) and the
 *    WGS 84 UTM zones (32601-32660, 32701-32760);
 * 2. the EPSG data frozen inside geotiff-geokeys-to-proj4 (2024) for every
 *    other geographic or projected code, with
 *    - the axis order normalised to easting-first (what GeoTIFF model space and
 *      GeoJSON use; GDAL's "traditional GIS order"),
 *    - a datum shift to WGS 84 from {@link DATUM_SHIFTS} where the datum is not
 *      WGS 84-compatible, or `+towgs84=0,0,0` for WGS 84 / GRS80 datums
 *      (ETRS89, NAD83, GDA, SIRGAS, JGD2011, CGCS2000 ...: PROJ's null
 *      transformation, within ~1-2 m of WGS 84).
 * A code on another datum with no known shift is refused rather than
 * reprojected hundreds of metres off.
 */
import { loadProj4 } from './proj4.js';
import { InputError } from '../errors.js';
import type { Epsg } from '../units.js';
import { datumShiftFor } from './datumShifts.js';
import { geokeysToProj4 } from './frozen-epsg.js';

const WGS84_A = 6378137;
const WGS84_B = 6356752.314245179;
const GRS80_B = 6356752.314140356;

const cache = new Map<number, string>();

/**
 * The proj4 definition string of an EPSG coordinate reference system, from data
 * shipped with the program (no network).
 *
 * @param epsg EPSG code of a geographic or projected CRS, e.g. 32633.
 * @returns a proj4 string with easting-first axes and a datum shift to WGS 84.
 * @throws InputError when the code is unknown offline, is not a 2-D map CRS
 *   (geocentric, vertical, compound), or its datum has no offline shift to WGS 84.
 * @example crsDefinitionForEpsg(32633) // '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs'
 */
export function crsDefinitionForEpsg(epsg: Epsg): string {
  const known = cache.get(epsg);
  if (known !== undefined) return known;
  const def = lookUp(epsg);
  cache.set(epsg, def);
  return def;
}

function unknown(epsg: number): InputError {
  return new InputError(`unknown EPSG code ${epsg}: no projection definition is available offline`);
}

function lookUp(epsg: number): string {
  if (!Number.isInteger(epsg) || epsg <= 0 || epsg === 32767) throw unknown(epsg);
  if (epsg === 4326) return '+proj=longlat +datum=WGS84 +no_defs';
  // proj4's own text for EPSG:3857: spherical formulas applied to WGS 84 lon/lat
  // (+nadgrids=@null keeps the sphere from being treated as a datum of its own).
  if (epsg === 3857) {
    return '+proj=merc +a=6378137 +b=6378137 +lat_ts=0 +lon_0=0 +x_0=0 +y_0=0 +k=1 +units=m +nadgrids=@null +wktext +no_defs';
  }
  if ((epsg >= 32601 && epsg <= 32660) || (epsg >= 32701 && epsg <= 32760)) {
    const zone = epsg % 100;
    return `+proj=utm +zone=${zone}${epsg > 32700 ? ' +south' : ''} +datum=WGS84 +units=m +no_defs`;
  }
  const converted = geokeysToProj4({ ProjectedCSTypeGeoKey: epsg, GTModelTypeGeoKey: 1 });
  if (Object.keys(converted.errors ?? {}).length > 0) throw unknown(epsg);
  if (converted.shouldConvertCoordinates) {
    // e.g. geographic CRSs in grads: their numbers are not degrees.
    throw new InputError(`EPSG code ${epsg} uses ${converted.coordinatesUnits} coordinates, which are not supported`);
  }
  return finish(epsg, converted.proj4);
}

/** Normalise the axes and make the datum explicit in a library definition. */
function finish(epsg: number, raw: string): string {
  const tokens = raw.trim().split(/\s+/).filter((t) => t.length > 0);
  const proj = param(tokens, 'proj');
  if (proj === undefined || proj === 'geocent') {
    throw new InputError(`EPSG code ${epsg} is not a geographic or projected 2-D CRS`);
  }
  let out = tokens.filter((t) => !t.startsWith('+axis=') && t !== '+no_defs');
  const axis = param(tokens, 'axis');
  if (axis !== undefined) {
    // Easting-type axis first whatever the EPSG axis order; keep the directions.
    const ew = axis.includes('w') ? 'w' : 'e';
    const ns = axis.includes('s') ? 's' : 'n';
    if (ew !== 'e' || ns !== 'n') out.push(`+axis=${ew}${ns}u`);
  }
  const shift = datumShiftFor(epsg);
  if (shift) {
    out = out.filter((t) => !t.startsWith('+towgs84='));
    out.push(`+towgs84=${shift.towgs84}`);
  } else if (param(tokens, 'towgs84') === undefined && param(tokens, 'nadgrids') === undefined) {
    const a = Number(param(tokens, 'a'));
    const b = Number(param(tokens, 'b'));
    if (a === b && Number.isFinite(a)) {
      out.push('+nadgrids=@null'); // a sphere: WGS 84 lon/lat taken as spherical (PROJ's ballpark)
    } else if (a === WGS84_A && (Math.abs(b - WGS84_B) < 1e-3 || Math.abs(b - GRS80_B) < 1e-3)) {
      out.push('+towgs84=0,0,0');
    } else {
      const ellps = param(tokens, 'ellps') ?? `a=${param(tokens, 'a')}`;
      throw new InputError(
        `EPSG code ${epsg} is on a datum (ellipsoid ${ellps}) with no shift to WGS 84 available offline; reprojecting it would be off by up to hundreds of metres`,
      );
    }
  }
  out.push('+no_defs');
  const def = out.join(' ');
  try {
    loadProj4()(def, 'WGS84');
  } catch {
    throw new InputError(`EPSG code ${epsg} uses a projection method that proj4 cannot compute (${proj})`);
  }
  return def;
}

function param(tokens: readonly string[], name: string): string | undefined {
  const prefix = `+${name}=`;
  const token = tokens.find((t) => t.startsWith(prefix));
  return token === undefined ? undefined : token.slice(prefix.length);
}
