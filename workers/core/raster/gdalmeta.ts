/**
 * GDAL's private TIFF tags: GDAL_METADATA (42112, an XML list of items) and
 * GDAL_NODATA (42113, the nodata value as text). Both are GDAL conventions
 * (GDAL GTiff driver documentation), not part of TIFF or GeoTIFF.
 */
import { InputError } from '../errors.js';
import { parseXml, XmlSyntaxError } from './xml.js';

export interface GdalMetadata {
  /** Dataset-level items of the default domain. */
  readonly dataset: Record<string, string>;
  /** Band scale and offset of sample 0 (band 1), when given. */
  readonly scale: number | null;
  readonly offset: number | null;
  /** Why the block was ignored (not well-formed XML, another root element), or null. */
  readonly warning: string | null;
}

function unescapeXml(s: string): string {
  return s.replace(/&(#x[0-9a-f]+|#[0-9]+|amp|lt|gt|quot|apos);/gi, (_m, ent: string) => {
    const e = ent.toLowerCase();
    if (e === 'amp') return '&';
    if (e === 'lt') return '<';
    if (e === 'gt') return '>';
    if (e === 'quot') return '"';
    if (e === 'apos') return "'";
    const code = e.startsWith('#x') ? parseInt(e.slice(2), 16) : parseInt(e.slice(1), 10);
    return code > 0 && code <= 0x10ffff ? String.fromCodePoint(code) : '';
  });
}

function parseNumber(text: string, what: string, path: string): number {
  const t = text.trim();
  const x = Number(t);
  if (t === '' || !Number.isFinite(x)) throw new InputError(`GDAL metadata ${what} "${t}" is not a number`, path);
  return x;
}

/**
 * Parse the GDAL_METADATA XML.
 * @param xml tag 42112 text, e.g. `<GDALMetadata><Item name="SCALE" sample="0" role="scale">0.1</Item></GDALMetadata>`
 * @param path file path, for error messages
 * @returns dataset items and band-1 scale/offset (null where absent)
 */
export function parseGdalMetadata(xml: string, path: string): GdalMetadata {
  // A block that is not a well-formed <GDALMetadata> document is ignored as a
  // whole, as GDAL ignores it (GTiff driver, metadata loading); the caller
  // passes the warning on so that the loss is said, not silent.
  let rootName: string;
  try {
    rootName = parseXml(xml).name;
  } catch (e) {
    if (!(e instanceof XmlSyntaxError)) throw e;
    return { dataset: {}, scale: null, offset: null, warning: `GDAL_METADATA tag is not well-formed XML (${e.message}); its items (scale, offset, acquisition time, ...) were ignored` };
  }
  if (rootName !== 'GDALMetadata') {
    return { dataset: {}, scale: null, offset: null, warning: `GDAL_METADATA tag holds a <${rootName}> document, not <GDALMetadata>; its items were ignored` };
  }
  const dataset: Record<string, string> = {};
  let scale: number | null = null;
  let offset: number | null = null;
  let bandScaleItem: number | null = null;
  let bandOffsetItem: number | null = null;
  const itemRe = /<Item\b([^>]*?)(?:\/>|>([\s\S]*?)<\/Item\s*>)/g;
  for (const m of xml.matchAll(itemRe)) {
    const attrs: Record<string, string> = {};
    for (const a of m[1].matchAll(/([A-Za-z_][\w.-]*)\s*=\s*"([^"]*)"/g)) attrs[a[1].toLowerCase()] = unescapeXml(a[2]);
    const name = attrs.name;
    if (name === undefined) continue;
    // GDAL escapes item values twice when writing and unescapes twice when reading; do as it does
    const value = unescapeXml(unescapeXml(m[2] ?? ''));
    const role = attrs.role?.toLowerCase();
    const sample = attrs.sample;
    const domain = attrs.domain ?? '';
    if (role === 'scale' || role === 'offset') {
      if (sample === undefined || sample === '0') {
        const x = parseNumber(value, role, path);
        if (role === 'scale') scale = x; else offset = x;
      }
      continue;
    }
    if (sample !== undefined) {
      // Band-level plain items (as netCDF-derived files carry them) count for band 1 only.
      if (sample === '0' && name.toLowerCase() === 'scale_factor') bandScaleItem = parseNumber(value, name, path);
      if (sample === '0' && name.toLowerCase() === 'add_offset') bandOffsetItem = parseNumber(value, name, path);
      continue;
    }
    if (domain !== '' || role !== undefined) continue;
    dataset[name] = value;
  }
  // Plain scale_factor / add_offset items are the netCDF CF convention (CF 1.x, section 8.1).
  const plainScale = bandScaleItem ?? findItem(dataset, 'scale_factor');
  const plainOffset = bandOffsetItem ?? findItem(dataset, 'add_offset');
  if (scale === null && plainScale !== null) scale = typeof plainScale === 'number' ? plainScale : parseNumber(plainScale, 'scale_factor', path);
  if (offset === null && plainOffset !== null) offset = typeof plainOffset === 'number' ? plainOffset : parseNumber(plainOffset, 'add_offset', path);
  return { dataset, scale, offset, warning: null };
}

function findItem(items: Record<string, string>, wanted: string): string | null {
  for (const [k, v] of Object.entries(items)) if (k.toLowerCase() === wanted) return v;
  return null;
}

/**
 * Parse GDAL_NODATA text ("-9999", "nan", "inf", "-inf", "1e+20").
 * @returns the nodata value (NaN for "nan")
 */
export function parseNodata(text: string, path: string): number {
  const t = text.trim().toLowerCase();
  if (t === 'nan' || t === '-nan') return NaN;
  if (t === 'inf' || t === '+inf' || t === 'infinity') return Infinity;
  if (t === '-inf' || t === '-infinity') return -Infinity;
  const x = Number(t);
  if (t === '' || Number.isNaN(x)) throw new InputError(`GDAL_NODATA value "${text.trim()}" is not a number`, path);
  return x;
}
