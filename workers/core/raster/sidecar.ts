/**
 * The `.aux.xml` sidecar GDAL writes beside a raster it cannot change in
 * place (GDAL "PAM", persistent auxiliary metadata: `scene.tif.aux.xml`, a
 * <PAMDataset> document). Band 1's <Scale>, <Offset> and <NoDataValue> and
 * the dataset's default-domain <Metadata> items are read; GDAL lets sidecar
 * values override those stored in the TIFF (GTiff driver, PAM information
 * applied after the file's own), and so does the header reader.
 */
import { readFile } from 'node:fs/promises';
import { InputError } from '../errors.js';
import { parseNodata } from './gdalmeta.js';
import { parseXml, XmlSyntaxError, type XmlElement } from './xml.js';

export interface Sidecar {
  /** Path of the sidecar file itself. */
  readonly path: string;
  readonly scale: number | null;
  readonly offset: number | null;
  readonly nodata: number | null;
  /** Dataset-level items of the default domain. */
  readonly metadata: Record<string, string>;
}

export interface SidecarReading {
  readonly sidecar: Sidecar | null;
  /** Problems that made the sidecar (or a part of it) unusable, each naming the sidecar. */
  readonly warnings: string[];
}

/** The sidecar path GDAL uses for a raster: the raster's path plus ".aux.xml". */
export function sidecarPath(rasterPath: string): string {
  return `${rasterPath}.aux.xml`;
}

function number(text: string, what: string, path: string): number {
  const t = text.trim();
  const x = Number(t);
  if (t === '' || !Number.isFinite(x)) throw new InputError(`${what} "${t}" is not a number`, path);
  return x;
}

function child(el: XmlElement, name: string): XmlElement | undefined {
  return el.children.find((c) => c.name === name);
}

/**
 * Parse the text of a `.aux.xml` sidecar.
 * @param xml the file's text
 * @param path the sidecar's path, for messages
 * @returns the values, or a warning when the document is not a well-formed <PAMDataset>
 * @throws InputError for a scale, offset or nodata that is not a number
 */
export function parseSidecar(xml: string, path: string): SidecarReading {
  let root: XmlElement;
  try {
    root = parseXml(xml);
  } catch (e) {
    if (!(e instanceof XmlSyntaxError)) throw e;
    return { sidecar: null, warnings: [`sidecar ${path} is not well-formed XML (${e.message}) and was ignored`] };
  }
  if (root.name !== 'PAMDataset') {
    return { sidecar: null, warnings: [`sidecar ${path} holds a <${root.name}> document, not <PAMDataset>, and was ignored`] };
  }
  const metadata: Record<string, string> = {};
  for (const md of root.children) {
    if (md.name !== 'Metadata' || (md.attrs.domain ?? '') !== '') continue;
    for (const item of md.children) if (item.name === 'MDI' && item.attrs.key !== undefined) metadata[item.attrs.key] = item.text;
  }
  let scale: number | null = null, offset: number | null = null, nodata: number | null = null;
  const band1 = root.children.find((c) => c.name === 'PAMRasterBand' && (c.attrs.band ?? '1') === '1');
  if (band1) {
    const s = child(band1, 'Scale'), o = child(band1, 'Offset'), nd = child(band1, 'NoDataValue');
    if (s) scale = number(s.text, 'sidecar <Scale>', path);
    if (o) offset = number(o.text, 'sidecar <Offset>', path);
    if (nd) {
      try {
        nodata = parseNodata(nd.text, path);
      } catch {
        throw new InputError(`sidecar <NoDataValue> "${nd.text.trim()}" is not a number`, path);
      }
    }
  }
  return { sidecar: { path, scale, offset, nodata, metadata }, warnings: [] };
}

/**
 * Read the sidecar of a raster, if there is one.
 * @param rasterPath the raster's path (the sidecar is `${rasterPath}.aux.xml`)
 */
export async function readSidecar(rasterPath: string): Promise<SidecarReading> {
  const path = sidecarPath(rasterPath);
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'ENOENT' || code === 'ENOTDIR') return { sidecar: null, warnings: [] };
    throw new InputError(`cannot read the sidecar file (${code ?? (e as Error).message})`, path);
  }
  return parseSidecar(text, path);
}
